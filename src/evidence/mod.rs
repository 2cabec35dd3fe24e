//! The evidence framework for one network: weight groups, the regularised
//! objective, α/β re-estimation, the log evidence and the Laplace posterior.

mod fit;
mod groups;
mod laplace;
mod objective;

pub use fit::{
    fit_model, fit_network, fit_network_from, predictive, predictive_factored, FitDiagnostics,
    FitFailure, FitProgress, FitSettings, FittedNetwork, GaussNewtonSample, HessianChoice,
    HessianKind, PausedFit, StartState,
};
pub use groups::{GroupKind, Groups};
pub use laplace::PosteriorFactor;
pub use objective::DataModel;
