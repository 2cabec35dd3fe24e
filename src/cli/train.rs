//! `mettle train`

use std::path::PathBuf;
use std::time::Instant;

use anyhow::Context;
use clap::Args;
use mettle::committee::{CommitteeParams, KrigingMode, NoiseMode, PartitionVariance};
use mettle::data::guess::measured_property;
use mettle::data::schema::{Role, Schema, TransformChoice};
use mettle::data::suggest::did_you_mean;
use mettle::data::Table;
use mettle::model::{SchemaTrainOptions, SchemaTrainReport, TrainSpec};
use mettle::Model;

use super::progress::TrainProgress;
use super::UsageError;

/// Arguments of `mettle train`.
#[derive(Args, Debug)]
#[command(
    about = "Train a committee for each target on a table of test records.",
    long_about = "Train a committee of Bayesian-regularised networks for each target.\n\n\
The table is a CSV with a header row (or a Parquet file). Part of its rows (--holdout) is held \
out inside the training data to rank candidate networks and choose the committee; the chosen \
members are then refitted on all rows. Nothing is tuned on data you later evaluate on: keep your \
test rows in a separate file and use `mettle evaluate`.\n\n\
With --schema, a TOML file says what each column is (input, target, auxiliary, identifier, \
ignored), its unit, its allowed bounds, the scale each target is learnt on (none, log, bounded) \
and the inputs derived from others (carbon equivalents, heat input, t8/5 ...); see docs/schema.md. \
Values are converted to internal units and checked on read: a bad cell, a value outside its \
bounds, a negative concentration or a composition above 100 wt% stops training with the file, \
row and column named. A row without a target value is left out for that target only; a row \
without an input value is an error unless --drop-incomplete-rows. Nothing is filled in.\n\n\
Examples:\n  mettle train --data welds.csv --target uts_mpa --out uts.json --seed 7\n  \
mettle train --data welds.csv --schema welds.toml --out welds_model.json"
)]
pub struct TrainArgs {
    #[command(flatten)]
    pub columns: TrainColumns,
    /// Where to write the model (JSON). Written atomically: a failed run leaves an older file intact.
    #[arg(long, value_name = "MODEL.json")]
    out: PathBuf,
    #[command(flatten)]
    pub settings: TrainSettings,
    /// Record the wall-clock training time in the model file (the file then differs between runs).
    #[arg(long)]
    record_time: bool,
    /// No progress display.
    #[arg(long, short)]
    quiet: bool,
}

/// The table and the columns to learn from: shared by `train` and `validate`.
#[derive(Args, Debug)]
pub struct TrainColumns {
    /// Table of test records (CSV with a header row, .parquet, or a spreadsheet workbook .xlsx).
    #[arg(long, visible_alias = "input", value_name = "FILE")]
    pub data: PathBuf,
    /// Sheet to read when the table is a spreadsheet workbook (.xlsx, .xls) [default: the first].
    #[arg(long, value_name = "NAME")]
    pub sheet: Option<String>,
    /// Target column(s) to learn; repeat or separate with commas for one committee per target.
    /// With --schema: which of the schema's targets to learn [default: all].
    #[arg(
        long,
        value_name = "NAME",
        value_delimiter = ',',
        required_unless_present = "schema"
    )]
    pub target: Vec<String>,
    /// Input columns, comma-separated [default: every other numeric column].
    #[arg(
        long,
        value_name = "A,B,...",
        value_delimiter = ',',
        conflicts_with = "schema"
    )]
    pub inputs: Option<Vec<String>>,
    /// Schema file (TOML) naming each column's role, unit, bounds, target transform and the derived inputs.
    #[arg(long, value_name = "SCHEMA.toml")]
    pub schema: Option<PathBuf>,
    /// With --schema: leave out rows that lack an input value (they are listed) instead of stopping.
    #[arg(long, requires = "schema")]
    pub drop_incomplete_rows: bool,
}

/// How the committees are trained: shared by `train` and `validate`.
#[derive(Args, Debug)]
pub struct TrainSettings {
    /// Hidden units to try: MIN..MAX or N; 0 trains the linear model.
    #[arg(long, value_name = "MIN..MAX", default_value = "1..10")]
    pub hidden: String,
    /// Random starts per hidden-unit count.
    #[arg(long, value_name = "N", default_value_t = 4)]
    pub restarts: usize,
    /// Seed of every random choice; the same data, options and seed give a byte-identical model.
    #[arg(long, value_name = "N", default_value_t = 0)]
    pub seed: u64,
    /// Share of the training rows held out to rank candidates (0.05 to 0.5).
    #[arg(long, value_name = "F", default_value_t = 0.2)]
    pub holdout: f64,
    /// Largest committee considered.
    #[arg(long, value_name = "N", default_value_t = 16)]
    pub max_members: usize,
    /// Whole trainings averaged (1 to 8): partition p (p = 0 … N−1) is the whole training with
    /// seed `--seed` + p (its own held-out rows, candidates, noise model, residual process, gross
    /// errors and error shape), and estimates average the partitions' committees (bagging: it
    /// lowers the mean's seed-to-seed scatter; each partition costs a whole training). Measured:
    /// `--partitions 2 --partition-variance mixture` gave lower test errors on four public data
    /// sets at twice the training time, with bands that are too wide where the noise is tiny
    /// (docs/method.md §6).
    #[arg(long, value_name = "N", default_value_t = 1)]
    pub partitions: usize,
    /// Variance of the average of the partitions (matters only with --partitions above 1):
    /// `within` takes the mean of the partitions' variances alone (their disagreement is already
    /// inside each committee's spread); `mixture` adds the spread of the partitions' means about
    /// the average (the variance of an equal mixture of their distributions); `correlated` takes
    /// the partitions' model errors as correlated with --partition-correlation ρ (the model
    /// variance of their mean u·(1 + (K−1)ρ)/K for K partitions of mean model variance u) and adds
    /// the spread of their means beyond the u·(1−ρ)(K−1)/K that correlation expects
    /// (docs/method.md §6).
    #[arg(long, value_enum, value_name = "RULE", default_value_t = PartitionVarianceArg::Within)]
    pub partition_variance: PartitionVarianceArg,
    /// Error correlation ρ between the partitions' model errors under --partition-variance
    /// correlated, 0 to 1 (0: independent errors, the average's model variance falls as 1/K;
    /// 1: one error repeated, the mixture's variance). The default 0.5 is the middle of the
    /// range, not a calibrated value: measured on four public data sets and invented
    /// near-noiseless data, no single ρ gave calibrated bands on all of them
    /// (docs/benchmarks.md, "Seventh round").
    #[arg(long, value_name = "R", default_value_t = mettle::prec::PARTITION_CORRELATION)]
    pub partition_correlation: f64,
    /// Noise model: `constant` (one noise level), `varying` (a noise level that varies with the
    /// inputs, learnt by a second small network per member), or `auto` (whichever gives the lower
    /// held-out NLPD inside the training data).
    #[arg(long, value_enum, value_name = "MODE", default_value_t = NoiseArg::Auto)]
    pub noise: NoiseArg,
    /// Kriging of the residuals: `on` adds a Gaussian process on what the committee leaves
    /// unexplained (it follows rows that share a residual, such as one mix tested at several
    /// ages, and returns to the committee away from the data), `off` keeps the committee alone,
    /// `auto` adds it when it lowers the held-out NLPD inside the training data (never to the
    /// linear model of `--hidden 0`, which stays the plain baseline). The process
    /// makes prediction slower (its cost grows with the training rows, at most 2000 of which
    /// enter it).
    #[arg(long, value_enum, value_name = "MODE", default_value_t = KrigingArg::Auto)]
    pub kriging: KrigingArg,
    /// Gross errors: `on` estimates, on the held-out rows inside the training data, the share of
    /// measured values that no smooth function of the inputs explains (copying slips, a
    /// specimen from another heat) and keeps it beside the Gaussian error bar: the sd and
    /// intervals stay those of a test free of gross error, `evaluate` scores measured values with
    /// the two-part density and names the probability that an out-of-line row is a gross error.
    /// The chosen networks are then refitted on all the rows with that share, so that rows that
    /// look like gross errors neither pull the estimates nor widen everyone's error bar.
    /// `off` keeps the Gaussian alone.
    #[arg(long, value_enum, value_name = "MODE", default_value_t = Switch::On)]
    pub gross_errors: Switch,
    /// Heavy tails: `on` lets the held-out rows inside the training data choose the shape of the
    /// scatter about an estimate — the Gaussian or a Student-t with 3 to 50 degrees of freedom and
    /// the same sd. Test archives are often more peaked and longer-tailed than a Gaussian: the
    /// t then gives a narrower central 68 % interval, a 95 % interval near ±2 sd, and a fairer
    /// density to values far out. The sd is unchanged; intervals, probabilities of meeting a
    /// requirement and `evaluate` use the chosen shape. `off` keeps the Gaussian.
    #[arg(long, value_enum, value_name = "MODE", default_value_t = Switch::On)]
    pub heavy_tails: Switch,
    /// With noise that varies with the inputs, refit the mean networks with each row weighted by
    /// its fitted noise precision (the efficient estimate when the noise model is right). By
    /// default the means fitted with every row alike are kept and the noise networks describe
    /// their residuals: reweighting gives up accuracy where the fit is poorest, because the
    /// residuals there hold the misfit as well as the scatter (docs/method.md §5).
    #[arg(long)]
    pub reweight_mean: bool,
    /// Do not widen the hidden-unit range when the best candidates sit at its top.
    #[arg(long)]
    pub no_widen: bool,
    /// Train every candidate network to the end instead of stopping those that rank poorly on
    /// the held-out rows after their first cycles (successive halving; twice the search time).
    #[arg(long)]
    pub no_early_stop: bool,
    /// One regularisation constant for all input weights instead of one per input (no ARD).
    #[arg(long)]
    pub no_ard: bool,
    /// Never model an input through its logarithm (by default strictly positive, strongly skewed inputs are).
    #[arg(long)]
    pub no_log_inputs: bool,
}

/// `on` / `off` values.
#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum)]
pub enum Switch {
    /// Do it.
    On,
    /// Do not.
    Off,
}

/// `--noise` values.
#[derive(Clone, Copy, Debug, clap::ValueEnum)]
pub enum NoiseArg {
    /// One noise level for every input.
    Constant,
    /// Noise that varies with the inputs.
    Varying,
    /// The better of the two on the held-out part.
    Auto,
}

impl From<NoiseArg> for NoiseMode {
    fn from(a: NoiseArg) -> Self {
        match a {
            NoiseArg::Constant => NoiseMode::Constant,
            NoiseArg::Varying => NoiseMode::Varying,
            NoiseArg::Auto => NoiseMode::Auto,
        }
    }
}

/// `--partition-variance` values.
#[derive(Clone, Copy, Debug, clap::ValueEnum)]
pub enum PartitionVarianceArg {
    /// Mean of the partitions' variances plus the spread of their means.
    Mixture,
    /// Mean of the partitions' variances alone.
    Within,
    /// Model errors correlated with --partition-correlation, plus the spread beyond it.
    Correlated,
}

impl From<PartitionVarianceArg> for PartitionVariance {
    fn from(a: PartitionVarianceArg) -> Self {
        match a {
            PartitionVarianceArg::Mixture => PartitionVariance::Mixture,
            PartitionVarianceArg::Within => PartitionVariance::Within,
            PartitionVarianceArg::Correlated => PartitionVariance::Correlated,
        }
    }
}

/// `--kriging` values.
#[derive(Clone, Copy, Debug, clap::ValueEnum)]
pub enum KrigingArg {
    /// Always add the residual process.
    On,
    /// The committee alone.
    Off,
    /// Add it when it lowers the held-out NLPD.
    Auto,
}

impl From<KrigingArg> for KrigingMode {
    fn from(a: KrigingArg) -> Self {
        match a {
            KrigingArg::On => KrigingMode::On,
            KrigingArg::Off => KrigingMode::Off,
            KrigingArg::Auto => KrigingMode::Auto,
        }
    }
}

/// Parse `MIN..MAX` or `N`.
pub fn parse_range(s: &str) -> Result<(usize, usize), UsageError> {
    let bad = || {
        UsageError(format!(
            "--hidden '{s}': expected MIN..MAX (e.g. 1..10) or a single count (0 = linear)"
        ))
    };
    let parts: Vec<&str> = s.split("..").collect();
    match parts.as_slice() {
        [one] => one.trim().parse().map(|n| (n, n)).map_err(|_| bad()),
        [a, b] => {
            let lo = a.trim().parse().map_err(|_| bad())?;
            let hi = b
                .trim()
                .trim_start_matches('=')
                .parse()
                .map_err(|_| bad())?;
            Ok((lo, hi))
        }
        _ => Err(bad()),
    }
}

impl TrainSettings {
    /// The committee settings these options ask for.
    ///
    /// # Errors
    /// A malformed `--hidden`.
    pub fn params(&self) -> Result<CommitteeParams, UsageError> {
        let (lo, hi) = parse_range(&self.hidden)?;
        Ok(CommitteeParams::default()
            .hidden(lo, hi)
            .restarts(self.restarts)
            .seed(self.seed)
            .holdout_fraction(self.holdout)
            .max_members(self.max_members)
            .partitions(self.partitions)
            .partition_variance(self.partition_variance.into())
            .partition_correlation(self.partition_correlation)
            .widen(!self.no_widen)
            .early_stop(!self.no_early_stop)
            .noise(self.noise.into())
            .kriging(self.kriging.into())
            .gross_errors(self.gross_errors == Switch::On)
            .heavy_tails(self.heavy_tails == Switch::On)
            .reweight_mean(self.reweight_mean)
            .ard(!self.no_ard))
    }
}

/// How `train` (and each fold of `validate`) trains: the schema with its
/// options, or the named columns.
pub enum Plan {
    /// Through a schema: the schema, its file name, the options.
    Schema(Schema, String, SchemaTrainOptions),
    /// Named columns.
    Columns(TrainSpec),
}

impl Plan {
    /// The plan the columns and settings ask for (reads the schema file).
    ///
    /// # Errors
    /// A malformed `--hidden`; an unreadable schema.
    pub fn new(c: &TrainColumns, s: &TrainSettings) -> anyhow::Result<Plan> {
        let params = s.params()?;
        Ok(match &c.schema {
            Some(path) => Plan::Schema(
                only_targets(Schema::load(path)?, &c.target, path)?,
                path.display().to_string(),
                SchemaTrainOptions {
                    params,
                    auto_log_inputs: !s.no_log_inputs,
                    drop_incomplete_rows: c.drop_incomplete_rows,
                },
            ),
            None => Plan::Columns(TrainSpec {
                targets: c.target.clone(),
                inputs: c.inputs.clone(),
                auto_log_inputs: !s.no_log_inputs,
                params,
            }),
        })
    }
}

/// The schema with only the targets named kept as targets (the others'
/// columns are then not read); all of them when none is named.
fn only_targets(
    mut schema: Schema,
    targets: &[String],
    path: &std::path::Path,
) -> anyhow::Result<Schema> {
    if targets.is_empty() {
        return Ok(schema);
    }
    let declared: Vec<String> = schema
        .with_role(Role::Target)
        .map(|c| c.name.clone())
        .collect();
    for t in targets {
        if !declared.contains(t) {
            return Err(UsageError(format!(
                "--target {t}: {} declares no target '{t}'{}; its targets are: {}",
                path.display(),
                did_you_mean(t, &declared),
                declared.join(", ")
            ))
            .into());
        }
    }
    for c in &mut schema.columns {
        if c.role == Role::Target && !targets.contains(&c.name) {
            c.role = Role::Ignored;
            c.min = None;
            c.max = None;
            c.margin = None;
            c.transform = TransformChoice::None;
        }
    }
    Ok(schema)
}

/// Without --inputs or a schema every other column holding numbers is an
/// input: say which, and warn of any whose name marks a measured property
/// (a test result is not known before the test).
fn quick_path_guard(table: &Table, targets: &[String]) {
    let inputs: Vec<&String> = table
        .names()
        .iter()
        .filter(|n| !targets.contains(n) && table.has_numbers(n))
        .collect();
    eprintln!(
        "inputs: every column holding numbers but the target(s): {} (--inputs A,B,... or a schema to choose)",
        inputs.iter().map(|s| s.as_str()).collect::<Vec<_>>().join(", ")
    );
    for n in inputs {
        if let Some(what) = measured_property(n) {
            eprintln!(
                "warning: input '{n}' looks like a measured property ({what}): a result of the test is not known before it, and a model that reads one estimates nothing new; leave it out with --inputs, or train a model for it as a target"
            );
        }
    }
}

pub fn run(a: TrainArgs) -> anyhow::Result<()> {
    let table = Table::read_sheet(&a.columns.data, a.columns.sheet.as_deref())?;
    let plan = Plan::new(&a.columns, &a.settings)?;
    if a.columns.schema.is_none() && a.columns.inputs.is_none() {
        quick_path_guard(&table, &a.columns.target);
    }
    let progress = TrainProgress::new(a.quiet);
    let started = Instant::now();
    let (result, report) = match &plan {
        Plan::Schema(schema, name, opts) => {
            match Model::train_with_schema(&table, schema, name, opts, &progress) {
                Ok((m, r)) => (Ok(m), Some(r)),
                Err(e) => (Err(e), None),
            }
        }
        Plan::Columns(spec) => (Model::train(&table, spec, &progress), None),
    };
    progress.finish();
    let mut model = result?;
    let secs = started.elapsed().as_secs_f64();
    if a.record_time {
        model.training.wall_seconds = Some(secs);
    }
    model
        .save(&a.out)
        .with_context(|| format!("saving the model to {}", a.out.display()))?;
    if let Some(r) = &report {
        print_schema_report(r, &a.columns.data);
    } else if !a.quiet {
        for i in &model.inputs {
            if let Some(h) = mettle::data::audit::code_hint(&i.name, &table.numeric(&i.name)?) {
                eprintln!("note: {h}");
            }
        }
    }
    if !a.quiet {
        for s in &model.set_aside {
            eprintln!("warning: input '{}' set aside: {}", s.name, s.reason);
        }
        for t in &model.targets {
            let c = &t.committee;
            // the median over the training rows where recorded (it varies
            // with the inputs under varying noise), else the members' 1/√β
            let noise: f64 = t.training_summary.as_ref().map_or_else(
                || {
                    c.members.iter().map(|m| m.noise_sd()).sum::<f64>() / c.members.len() as f64
                        * t.scaling.width()
                },
                |s| s.noise_sd.median,
            );
            let note = match (t.transform.name(), t.training_summary.is_some()) {
                ("none", _) => String::new(),
                (other, true) => format!(
                    " (NLPD on the {other} scale the target is learnt on, noise sd in its own units)"
                ),
                (other, false) => format!(" (both on the {other} scale the target is learnt on)"),
            };
            let rows = format!(
                "{}: {} rows{}",
                t.name,
                t.n_rows,
                if t.n_missing > 0 {
                    format!(" ({} without this target left out)", t.n_missing)
                } else {
                    String::new()
                }
            );
            if c.n_partitions() == 1 {
                eprintln!("{rows}, {}", partition_summary(c, noise, &note));
            } else {
                eprintln!(
                    "{rows}, {} partitions averaged (each a whole training, seed {} + p), variance rule '{}', median noise sd {noise:.4}{note}:",
                    c.n_partitions(),
                    a.settings.seed,
                    c.partition_rule().label()
                );
                for (p, part) in c.partitions().enumerate() {
                    eprintln!(
                        "  partition {} of {} (seed {}): {}",
                        p + 1,
                        c.n_partitions(),
                        a.settings.seed.wrapping_add(p as u64),
                        partition_summary(part, f64::NAN, "")
                    );
                }
            }
            for n in mettle::explain::fit_notes(t) {
                eprintln!("note: {}: {n}", t.name);
            }
        }
        eprintln!("model written to {} ({secs:.1} s)", a.out.display());
    }
    Ok(())
}

/// Warnings of training through a schema, on stderr. Derivation warnings
/// are shown for the first rows only, with a count of the rest.
/// One partition's committee for the training summary: size, hidden
/// units, held-out NLPD, noise model (with the sd `noise` when finite),
/// and `note` on the scale, residual process, gross errors and error
/// shape, discarded candidates.
fn partition_summary(c: &mettle::committee::Committee, noise: f64, note: &str) -> String {
    let failed = c.candidates.iter().filter(|c| c.failure.is_some()).count();
    let kind = noise_kind(&c.selection.noise);
    // without a noise sd (a partition's line) the kind ends at its choice
    let noise_kind = if noise.is_finite() {
        kind
    } else {
        kind.trim_end_matches(", median noise sd")
            .trim_end_matches(", noise sd")
            .to_string()
    };
    let noise = if noise.is_finite() {
        format!(" {noise:.4}")
    } else {
        String::new()
    };
    let ks = &c.selection.kriging;
    let kriging = match (&c.kriging, ks.kriging_nlpd, ks.committee_nlpd) {
        (Some(k), Some(kn), Some(cn)) => format!(
            ", residuals kriged over {} rows (held-out NLPD {kn:.3} against {cn:.3} without)",
            k.x.nrows()
        ),
        (None, Some(kn), Some(cn)) => {
            format!(", residuals not kriged (held-out NLPD {kn:.3} with, {cn:.3} without)")
        }
        _ => String::new(),
    };
    let gross = c.gross_errors.as_ref().map_or(String::new(), |g| {
        format!(
            "; gross errors {:.1} % of the held-out rows, error shape {} (held-out NLPD {:.3} against {:.3} with a Gaussian alone)",
            100.0 * g.share,
            g.tail_dof
                .map_or("Gaussian".to_string(), |nu| format!("Student-t, {nu} degrees of freedom")),
            g.heldout_nlpd,
            g.heldout_nlpd_gaussian
        )
    });
    format!(
        "committee of {} (hidden units {}), held-out NLPD {:.3}, {noise_kind}{noise}{note}{kriging}{gross}; {} of {} candidates discarded",
        c.members.len(),
        c.members.iter().map(|m| m.n_hidden.to_string()).collect::<Vec<_>>().join(","),
        c.selection.nlpd_by_size[c.selection.n_members - 1],
        failed,
        c.candidates.len()
    )
}

/// How the noise model was chosen, for the training summary: the two
/// held-out NLPDs and, when the one-standard-error rule kept constant noise
/// although varying noise scored lower, by how many standard errors.
fn noise_kind(ns: &mettle::committee::NoiseSelection) -> String {
    match (ns.varying, ns.constant_nlpd, ns.varying_nlpd) {
        (true, Some(cn), Some(vn)) => format!(
            "noise varies with the inputs (held-out NLPD {vn:.3} against {cn:.3} with constant noise), median noise sd"
        ),
        (false, Some(cn), Some(vn)) => match ns.varying_margin_se {
            Some(m) if m > 0.0 => format!(
                "constant noise (varying noise scored better on the held-out part by only {m:.2} \
                 standard errors: the simpler model is kept), noise sd"
            ),
            _ => format!(
                "constant noise (held-out NLPD {cn:.3} against {vn:.3} with varying noise), noise sd"
            ),
        },
        _ => "constant noise, noise sd".to_string(),
    }
}

fn print_schema_report(r: &SchemaTrainReport, data: &std::path::Path) {
    for line in r.lines(&data.display().to_string(), "--drop-incomplete-rows") {
        eprintln!("{line}");
    }
    super::output::print_row_warnings(&r.row_warnings);
}
