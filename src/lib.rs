//! # mettle
//!
//! Estimates mechanical properties of steels and weld metals — tensile
//! strength, yield, elongation, Charpy impact energy — from composition and
//! processing, with honest error bars, by committees of small neural
//! networks trained under the Bayesian evidence framework (MacKay 1992,
//! Neural Computation 4:415 and 4:448; Bishop 1995, *Neural Networks for
//! Pattern Recognition*, ch. 10).
//!
//! The modules follow the data's path (imports run only down it; the layer
//! order is stated in DEVELOPERS.md): [`transform`] (a target's learnt
//! scale) → [`data`] (tables in, files out) →
//! [`features`] (transforms and scaling) → [`net`] (the network) →
//! [`evidence`] (one network's Bayesian training) → [`committee`] (the
//! candidate search and the committee) → [`model`] (the trained model and
//! its file) → [`predict`] (estimates and the domain verdict) →
//! [`metrics`] (evaluation).
//!
//! Estimates are not test results: qualification testing per the
//! applicable code decides, under local codes and licensed engineers.
#![deny(unsafe_code)]
#![warn(missing_docs)]
#![deny(clippy::float_cmp)]

pub mod chart;
pub mod committee;
pub mod curves;
pub mod data;
pub mod demo;
pub mod derive;
pub mod domain;
pub mod error;
pub mod evidence;
pub mod explain;
pub mod features;
mod matmul;
pub mod metrics;
pub mod model;
pub mod net;
pub mod observer;
pub mod prec;
pub mod predict;
pub mod report;
pub mod screen;
pub mod transform;
pub mod units;
pub mod validate;

pub use error::{Error, Result};
pub use model::Model;

/// Run OpenBLAS on one thread. Parallelism comes from training candidates
/// on separate threads; OpenBLAS threads on top of that would oversubscribe
/// the cores, and a different number of them changes the order of
/// floating-point sums, so that near-ties (the committee size, a noise
/// model) can fall the other way. Every program that trains — the binary,
/// the benchmark example, the benches — calls this first, so that they
/// give the same models. One of the library's two `unsafe` calls (the
/// other is the matrix product of `matmul`; the crate denies unsafe code
/// elsewhere).
#[allow(unsafe_code)]
pub fn single_threaded_blas() {
    extern "C" {
        fn openblas_set_num_threads(n: std::ffi::c_int);
    }
    // SAFETY: a plain setter exported by the OpenBLAS that ndarray-linalg
    // links; called before any BLAS routine runs.
    unsafe { openblas_set_num_threads(1) };
}
