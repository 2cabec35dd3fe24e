//! Command-line parsing and the glue from arguments to library calls.
//! Nothing here computes anything the library could.

mod audit;
mod chart_file;
mod compare;
mod demo_data;
mod derive;
mod design;
mod evaluate;
mod explain;
mod output;
mod predict;
mod predict_extra;
mod progress;
mod report;
mod schema;
mod screen;
mod serve;
mod sweep;
mod train;
mod validate;

use clap::{Parser, Subcommand};

/// A usage mistake found after parsing (exit code 2).
#[derive(Debug, thiserror::Error)]
#[error("{0}")]
pub struct UsageError(pub String);

/// The caution printed wherever an estimate could feed a structural decision.
pub use mettle::predict::CAUTION;

/// Load the model file at `path`, an error saying that it is the model
/// that could not be read.
pub fn load_model(path: &std::path::Path) -> anyhow::Result<mettle::Model> {
    use anyhow::Context;
    mettle::Model::load(path).with_context(|| {
        format!(
            "the model file {} (a model written by `mettle train`)",
            path.display()
        )
    })
}

/// An incomplete-row refusal with the remedy that fits the command; any
/// other error as it is.
fn with_remedy(e: anyhow::Error, remedy: &str) -> anyhow::Error {
    let incomplete = e.chain().any(|c| {
        matches!(
            c.downcast_ref::<mettle::Error>(),
            Some(mettle::Error::MissingInputs { .. })
        )
    });
    if incomplete {
        UsageError(format!("{e:#}. {remedy}")).into()
    } else {
        e
    }
}

/// What to do about rows without every input, at training.
const TRAIN_REMEDY: &str =
    "Complete them, or leave such rows out explicitly with --drop-incomplete-rows";

/// What to do about rows without every input, where estimates are made.
const ESTIMATE_REMEDY: &str = "Estimates are made for complete rows only: fill in the empty cells, or take those rows out of the file (--drop-incomplete-rows is a training option)";

#[derive(Parser, Debug)]
#[command(
    name = "mettle",
    version,
    about = "Learn mechanical properties of steels and weld metals from test records; estimate them, with error bars, for heats not yet made.",
    long_about = "Learn mechanical properties of steels and weld metals from test records; estimate them, with error bars, for heats not yet made.\n\n\
mettle trains committees of small neural networks under the Bayesian evidence framework \
(regularisation set by the data, automatic relevance determination, Laplace error bars). \
Every estimate comes with a standard deviation and a domain verdict.\n\n\
A typical session:\n  \
mettle train    --data welds.csv --target uts_mpa --out uts.json\n  \
mettle predict  --model uts.json --input new_heats.csv\n  \
mettle evaluate --model uts.json --data held_back.csv\n\n\
Exit codes: 0 success, 1 runtime failure, 2 bad usage or bad input.\n\n\
Estimates are not test results: qualification testing per the applicable code decides.",
    propagate_version = true
)]
pub struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand, Debug)]
enum Command {
    // about and long_about come from the Args struct: a doc comment here would replace them
    Train(train::TrainArgs),
    // about and long_about come from the Args struct: a doc comment here would replace them
    Predict(predict::PredictArgs),
    // about and long_about come from the Args struct: a doc comment here would replace them
    Evaluate(evaluate::EvaluateArgs),
    // about and long_about come from the Args struct: a doc comment here would replace them
    Derive(derive::DeriveArgs),
    // about and long_about come from the Args struct: a doc comment here would replace them
    Audit(audit::AuditArgs),
    // about and long_about come from the Args struct: a doc comment here would replace them
    DemoData(demo_data::DemoDataArgs),
    // about and long_about come from the Args struct: a doc comment here would replace them
    Explain(explain::ExplainArgs),
    // about and long_about come from the Args struct: a doc comment here would replace them
    Report(report::ReportArgs),
    // about and long_about come from the Args struct: a doc comment here would replace them
    Compare(compare::CompareArgs),
    // about and long_about come from the Args struct: a doc comment here would replace them
    Schema(schema::SchemaArgs),
    // about and long_about come from the Args struct: a doc comment here would replace them
    Screen(screen::ScreenArgs),
    // about and long_about come from the Args struct: a doc comment here would replace them
    Design(design::DesignArgs),
    // about and long_about come from the Args struct: a doc comment here would replace them
    Sweep(sweep::SweepArgs),
    // about and long_about come from the Args struct: a doc comment here would replace them
    Transition(sweep::TransitionArgs),
    // about and long_about come from the Args struct: a doc comment here would replace them
    Validate(validate::ValidateArgs),
    // about and long_about come from the Args struct: a doc comment here would replace them
    Serve(serve::ServeArgs),
}

/// Run the parsed command.
///
/// # Errors
/// Whatever the library reports, with context naming the file concerned.
pub fn run(cli: Cli) -> anyhow::Result<()> {
    match cli.command {
        Command::Train(a) => train::run(a).map_err(|e| with_remedy(e, TRAIN_REMEDY)),
        Command::Predict(a) => predict::run(a).map_err(|e| with_remedy(e, ESTIMATE_REMEDY)),
        Command::Evaluate(a) => evaluate::run(a).map_err(|e| with_remedy(e, ESTIMATE_REMEDY)),
        Command::Derive(a) => derive::run(a),
        Command::Audit(a) => audit::run(a),
        Command::DemoData(a) => demo_data::run(a),
        Command::Explain(a) => explain::run(a),
        Command::Report(a) => report::run(a),
        Command::Compare(a) => compare::run(a),
        Command::Schema(a) => schema::run(a),
        Command::Screen(a) => screen::run(a).map_err(|e| with_remedy(e, ESTIMATE_REMEDY)),
        Command::Design(a) => design::run(a),
        Command::Sweep(a) => sweep::run(a),
        Command::Transition(a) => sweep::run_transition(a),
        Command::Validate(a) => validate::run(a),
        Command::Serve(a) => serve::run(a),
    }
}
