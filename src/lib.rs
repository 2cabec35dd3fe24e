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
pub mod fixedmath;
pub mod linalg;
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
