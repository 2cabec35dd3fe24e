//! The network: one hidden layer of tanh units and a linear output, or a
//! purely linear model (`n_hidden = 0`).
//!
//! Everything here works in the scaled space (inputs and target mapped to
//! [−0.5, 0.5]); scaling lives in [`crate::features`].

mod activation;
mod inputs;
mod mlp;
mod passes;

pub use inputs::Inputs;

pub(crate) use activation::tanh;
pub use mlp::{Architecture, ParamLayout};
