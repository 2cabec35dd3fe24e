//! `mettle screen`, and the problem arguments and output shared with
//! `mettle design`.

use std::path::{Path, PathBuf};

use anyhow::Context;
use clap::Args;
use mettle::data::Table;
use mettle::screen::{
    rank, read_costs, Candidate, CeIndex, CostModel, ProcessLimits, Requirement, Screening,
};
use mettle::Model;
use serde_json::{json, Map, Value};

use super::output::{aligned, csv_field, emit, num, sig, Format, DEFAULT_DIGITS};
use super::CAUTION;

/// Models, requirements, prices and limits: what `screen` and `design` share.
#[derive(Args, Debug)]
pub struct ProblemArgs {
    /// Model file(s) written by `mettle train`; repeat for models of different targets.
    #[arg(long, value_name = "MODEL.json", required = true, num_args = 1..)]
    model: Vec<PathBuf>,
    /// A requirement, e.g. `uts_mpa>=550` or `charpy_j>=47@test_temp_c=-40`; repeat for several (docs/screening.md).
    #[arg(long = "require", value_name = "REQ", required = true)]
    require: Vec<String>,
    /// Prices and process limits (TOML, docs/screening.md; example with invented prices: datasets/fellhaven_costs.toml).
    #[arg(long, value_name = "COSTS.toml")]
    costs: Option<PathBuf>,
    /// Largest carbon equivalent allowed (replaces the costs file's limit).
    #[arg(long, value_name = "WT%")]
    max_ce: Option<f64>,
    /// Which carbon equivalent --max-ce limits: iiw, pcm or cet.
    #[arg(long, value_name = "INDEX", default_value = "iiw")]
    ce_index: String,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    pub format: Format,
    /// Write to this file (atomically) instead of standard output.
    #[arg(long, value_name = "FILE")]
    pub out: Option<PathBuf>,
    /// Significant digits of the numbers in CSV output.
    #[arg(long, value_name = "N", default_value_t = DEFAULT_DIGITS as u64,
          value_parser = clap::value_parser!(u64).range(1..=17))]
    digits: u64,
}

/// The loaded problem.
pub struct Problem {
    pub models: Vec<Model>,
    pub requirements: Vec<Requirement>,
    pub costs: Option<CostModel>,
    pub limits: ProcessLimits,
}

impl ProblemArgs {
    /// Significant digits of CSV numbers.
    pub fn digits(&self) -> usize {
        usize::try_from(self.digits).unwrap_or(DEFAULT_DIGITS)
    }

    /// Load the models, parse the requirements, read prices and limits.
    pub fn load(&self) -> anyhow::Result<Problem> {
        let models = self
            .model
            .iter()
            .map(|p| super::load_model(p))
            .collect::<anyhow::Result<Vec<_>>>()?;
        let requirements = self
            .require
            .iter()
            .map(|r| Requirement::parse(r))
            .collect::<mettle::Result<Vec<_>>>()?;
        let (costs, mut limits) = match &self.costs {
            Some(p) => {
                let (c, l) = read_costs(p)?;
                (Some(c), l)
            }
            None => (None, ProcessLimits::default()),
        };
        if let Some(max) = self.max_ce {
            if !(max.is_finite() && max > 0.0) {
                return Err(mettle::Error::InvalidParameter {
                    name: "max-ce",
                    value: max.to_string(),
                    expected: "a carbon equivalent above 0 wt%".into(),
                }
                .into());
            }
            limits.max_ce = Some((CeIndex::parse(&self.ce_index)?, max));
        }
        Ok(Problem {
            models,
            requirements,
            costs,
            limits,
        })
    }
}

impl Problem {
    pub fn screening(&self) -> mettle::Result<Screening<'_>> {
        Screening::new(
            &self.models,
            self.requirements.clone(),
            self.costs.clone(),
            self.limits.clone(),
        )
    }
}

/// Arguments of `mettle screen`.
#[derive(Args, Debug)]
#[command(
    about = "Rank candidate compositions by their probability of meeting requirements, with cost and domain verdict.",
    long_about = "Rank a table of candidates (compositions and processes) by the joint probability of \
meeting every requirement, ties going to the cheaper candidate.\n\n\
Each requirement is TARGET OP VALUE, OP one of >= <= > <, optionally with inputs set for it alone \
after @ (a test temperature): `uts_mpa>=550`, `charpy_j>=47@test_temp_c=-40`. The probability of \
meeting it comes from the committee's predictive distribution on the scale the target was learnt \
on (Gaussian, or the Student-t error shape the model chose; a log-scale target is judged on that \
scale). The joint \
probability of meeting all of them comes from the targets' joint predictive distribution: their \
scatter correlated as on the training rows where both were measured (stored in the model), \
independent only where the data give no correlation; the output says which (`joint`: correlated, \
independent or single) and names the correlations used.\n\n\
With --costs, a TOML file of prices (currency per kg per element and for the balance) gives each \
candidate's alloy cost per tonne, and its [limits] (maximum CE(IIW), Pcm or CET, element bounds, \
bounds on sums of elements) are checked; --max-ce sets the carbon-equivalent limit on the command \
line. Candidates outside the training domain or breaking a limit are shown but ranked after every \
other one (--allow-out-of-domain ranks out-of-domain candidates by probability too); candidates \
with thin support (verdict thin: near the data, but few close training rows or a raised model \
uncertainty) are ranked and marked.\n\n\
Output: a table (rank, row of the input, each requirement's estimate, sd and probability, the \
joint probability, cost, carbon equivalent, verdict), or CSV or JSON with every target's estimate.\n\n\
Estimates are not test results: qualification testing per the applicable code decides; local \
codes and licensed engineers have the final word.",
    after_long_help = "Example:\n  mettle screen --model uts.json --model charpy.json --input candidates.csv \\\n    --require uts_mpa>=550 --require 'charpy_j>=47@test_temp_c=-40' --costs datasets/fellhaven_costs.toml"
)]
pub struct ScreenArgs {
    #[command(flatten)]
    problem: ProblemArgs,
    /// Candidates (CSV with a header row, Parquet, or a spreadsheet workbook .xlsx), holding every input the models read.
    #[arg(long, visible_alias = "data", value_name = "FILE")]
    input: PathBuf,
    /// Sheet to read when the table is a spreadsheet workbook (.xlsx, .xls) [default: the first].
    #[arg(long, value_name = "NAME")]
    sheet: Option<String>,
    /// Rank out-of-domain candidates by their probability like the others.
    #[arg(long)]
    allow_out_of_domain: bool,
    /// Column naming each candidate (a heat or trial code), echoed in the output.
    #[arg(long, value_name = "COLUMN")]
    id: Option<String>,
}

/// One candidate as printed.
pub struct Shown<'a> {
    pub rank: Option<usize>,
    /// The candidate's identifier (screen, from the table's identifier column).
    pub label: Option<String>,
    /// Inputs as (name, value): the varied ones (design), or the table's
    /// numeric columns as read (screen).
    pub inputs: Vec<(String, f64)>,
    pub candidate: &'a Candidate,
    pub score: Option<f64>,
}

pub fn run(a: ScreenArgs) -> anyhow::Result<()> {
    let problem = a.problem.load()?;
    let screening = problem.screening()?;
    let table = Table::read_sheet(&a.input, a.sheet.as_deref())?;
    // units the header declares, converted in every model; a column that
    // looks as if it were in another unit is refused
    for (k, m) in problem.models.iter().enumerate() {
        let declared = m.unit_check(&table)?;
        if k == 0 {
            for d in declared {
                eprintln!("note: {}", d.describe());
            }
        }
    }
    let cands = screening
        .evaluate(&table)
        .with_context(|| format!("screening {}", a.input.display()))?;
    let labels = problem.models[0].row_labels(&table, a.id.as_deref())?;
    // the candidate's inputs as given: every numeric column but the identifier
    let mut echoed: Vec<(String, Vec<Option<f64>>)> = Vec::new();
    for name in table.names() {
        if labels.as_ref().is_some_and(|l| &l.column == name) || !table.is_numeric(name) {
            continue;
        }
        echoed.push((name.clone(), table.numeric_optional(name)?));
    }
    let order = rank(&cands, a.allow_out_of_domain);
    let shown: Vec<Shown<'_>> = order
        .iter()
        .map(|&i| Shown {
            rank: cands[i]
                .eligible(a.allow_out_of_domain)
                .then_some(order.iter().position(|&j| j == i).unwrap_or(i) + 1),
            label: labels.as_ref().map(|l| l.get(cands[i].row).to_string()),
            inputs: echoed
                .iter()
                .map(|(n, v)| (n.clone(), v[cands[i].row].unwrap_or(f64::NAN)))
                .collect(),
            candidate: &cands[i],
            score: None,
        })
        .collect();
    let mut notes = Vec::new();
    let n_out = cands.iter().filter(|c| !c.in_domain).count();
    let n_thin = cands
        .iter()
        .filter(|c| c.level == mettle::domain::DomainLevel::Thin)
        .count();
    if n_thin > 0 {
        notes.push(format!(
            "{n_thin} of {} candidates have thin support (verdict 'thin'): ranked, but their \
             estimates lean on the model's interpolation; check the notes and error bars",
            cands.len()
        ));
    }
    if n_out > 0 {
        notes.push(format!(
            "{n_out} of {} candidates are outside the training domain{}",
            cands.len(),
            if a.allow_out_of_domain {
                " (ranked by probability all the same, as asked: their estimates are extrapolations)"
            } else {
                ": shown after the others, unranked"
            }
        ));
    }
    let id_column = labels.as_ref().map(|l| l.column.as_str());
    let how = RenderAs {
        kind: "screening",
        id_column,
        format: a.problem.format,
        digits: a.problem.digits(),
    };
    let text = render(&screening, &shown, &notes, &how)?;
    finish(&text, a.problem.format, a.problem.out.as_deref())
}

/// Print or write `text`, with the caution on stderr when the table
/// (which carries it) is not on the terminal.
pub fn finish(text: &str, format: Format, out: Option<&Path>) -> anyhow::Result<()> {
    if format != Format::Table || out.is_some() {
        eprintln!("{CAUTION}");
    }
    emit(text, out)
}

/// How candidates are written.
pub struct RenderAs<'a> {
    /// `screening` or `design`.
    pub kind: &'a str,
    /// The column the candidates' identifiers come from.
    pub id_column: Option<&'a str>,
    /// Output format.
    pub format: Format,
    /// Significant digits of CSV numbers.
    pub digits: usize,
}

/// Render candidates as a table, CSV or JSON.
pub fn render(
    s: &Screening<'_>,
    shown: &[Shown<'_>],
    notes: &[String],
    how: &RenderAs<'_>,
) -> anyhow::Result<String> {
    Ok(match how.format {
        Format::Table => table(s, shown, notes, how.id_column),
        Format::Csv => csv(s, shown, how),
        Format::Json => {
            let mut v = serde_json::to_string_pretty(&to_json(s, shown, notes, how))?;
            v.push('\n');
            v
        }
    })
}

fn verdict(c: &Candidate) -> String {
    let mut parts = Vec::new();
    if c.in_domain {
        parts.push(c.level.short().to_string());
    } else {
        parts.push(format!("OUT: {}", c.notes.join("; ")));
    }
    for v in &c.violations {
        parts.push(format!("LIMIT: {}", v.text));
    }
    if c.in_domain && !c.notes.is_empty() {
        parts.push(c.notes.join("; "));
    }
    parts.join("; ")
}

fn centre(e: &mettle::predict::Estimate) -> f64 {
    if e.interval_kind == mettle::model::IntervalKind::Normal {
        e.mean
    } else {
        e.median
    }
}

/// True for design's candidates (scored points of a search, no table row).
fn is_design(shown: &[Shown<'_>]) -> bool {
    shown.first().is_some_and(|r| r.score.is_some())
}

fn table(
    s: &Screening<'_>,
    shown: &[Shown<'_>],
    notes: &[String],
    id_column: Option<&str>,
) -> String {
    let mut h = vec!["rank".to_string()];
    // design shows the inputs it varied; screen the row and identifier
    // (its inputs, as given, are in the CSV and JSON output)
    let design = is_design(shown);
    if design {
        h.extend(shown[0].inputs.iter().map(|(n, _)| n.clone()));
    } else {
        h.push("row".into());
        h.extend(id_column.map(str::to_string));
    }
    for (k, r) in s.requirements().iter().enumerate() {
        h.push(r.target.clone());
        h.push("sd".into());
        h.push(format!("P{}", k + 1));
    }
    h.push("P_joint".into());
    let sampled = shown.iter().any(|r| r.candidate.joint_mc_error.is_some());
    if sampled {
        h.push("P_joint_se".into());
    }
    if let Some(c) = s.costs() {
        h.push(format!("cost_{}/t", c.currency));
    }
    if let Some((idx, _)) = s.limits().max_ce {
        h.push(idx.name().to_string());
    }
    h.push("verdict".into());
    let body: Vec<Vec<String>> = shown
        .iter()
        .map(|r| {
            let c = r.candidate;
            let mut cells = vec![r.rank.map_or("-".into(), |k| k.to_string())];
            if design {
                cells.extend(r.inputs.iter().map(|(_, v)| num(*v)));
            } else {
                cells.push((c.row + 1).to_string());
                cells.extend(r.label.clone());
            }
            for o in &c.requirements {
                cells.push(num(centre(&o.estimate)));
                cells.push(num(o.estimate.sd));
                cells.push(format!("{:.4}", o.probability));
            }
            cells.push(format!("{:.4}", c.joint_probability));
            if sampled {
                cells.push(c.joint_mc_error.map_or("-".into(), |e| format!("{e:.4}")));
            }
            if let Some(v) = c.cost_per_tonne {
                cells.push(format!("{v:.1}"));
            }
            if let Some(v) = c.carbon_equivalent {
                cells.push(format!("{v:.3}"));
            }
            cells.push(verdict(c));
            cells
        })
        .collect();
    let mut out = String::from("requirements:\n");
    for (k, r) in s.requirements().iter().enumerate() {
        out.push_str(&format!("  P{} = P({r})\n", k + 1));
    }
    out.push_str(&format!(
        "joint ({}): {}\n",
        s.joint_basis().name(),
        s.joint_statement()
    ));
    if sampled {
        out.push_str(&format!(
            "P_joint_se: standard error of P_joint, sampled ({} seeded draws) for more than two correlated targets\n",
            mettle::prec::JOINT_MC_SAMPLES
        ));
    }
    if let Some(c) = s.costs() {
        out.push_str(&format!(
            "cost: alloy cost per tonne in {}{}\n",
            c.currency,
            c.note.as_ref().map_or(String::new(), |n| format!(" ({n})"))
        ));
    }
    out.push('\n');
    out.push_str(&aligned(&h, &body));
    for n in notes {
        out.push_str(&format!("note: {n}\n"));
    }
    out.push('\n');
    out.push_str(CAUTION);
    out.push('\n');
    out
}

fn csv(s: &Screening<'_>, shown: &[Shown<'_>], how: &RenderAs<'_>) -> String {
    let id_column = how.id_column;
    let n = |v: f64| sig(v, how.digits);
    let design = is_design(shown);
    let mut h = vec!["rank".to_string()];
    if !design {
        h.push("row".into());
        h.extend(id_column.map(str::to_string));
    }
    if let Some(r) = shown.first() {
        h.extend(r.inputs.iter().map(|(n, _)| n.clone()));
    }
    if let Some(r) = shown.first() {
        for e in &r.candidate.estimates {
            h.push(format!("{}_centre", e.target));
            h.push(format!("{}_sd", e.target));
            h.push(format!("{}_lo95", e.target));
            h.push(format!("{}_hi95", e.target));
        }
    }
    for k in 0..s.requirements().len() {
        h.push(format!("P{}", k + 1));
    }
    h.extend(
        [
            "P_joint",
            "P_joint_se",
            "joint",
            "cost_per_tonne",
            "carbon_equivalent",
            "in_domain",
            "domain",
            "notes",
        ]
        .map(String::from),
    );
    let mut out: String = h.iter().map(|x| csv_field(x)).collect::<Vec<_>>().join(",");
    out.push('\n');
    let opt = |v: Option<f64>| v.map_or(String::new(), n);
    for r in shown {
        let c = r.candidate;
        let mut cells = vec![r.rank.map_or(String::new(), |k| k.to_string())];
        if !design {
            cells.push((c.row + 1).to_string());
            cells.extend(r.label.as_deref().map(csv_field));
        }
        cells.extend(r.inputs.iter().map(|(_, v)| n(*v)));
        for e in &c.estimates {
            let x = &e.estimate;
            cells.extend([centre(x), x.sd, x.lo95, x.hi95].map(n));
        }
        cells.extend(c.requirements.iter().map(|o| n(o.probability)));
        cells.push(n(c.joint_probability));
        cells.push(opt(c.joint_mc_error));
        cells.push(s.joint_basis().name().to_string());
        cells.push(opt(c.cost_per_tonne));
        cells.push(opt(c.carbon_equivalent));
        cells.push(c.in_domain.to_string());
        cells.push(c.level.name().to_string());
        let mut n = c.notes.clone();
        n.extend(c.violations.iter().map(|v| format!("limit: {}", v.text)));
        cells.push(csv_field(&n.join("; ")));
        out.push_str(&cells.join(","));
        out.push('\n');
    }
    out
}

fn to_json(s: &Screening<'_>, shown: &[Shown<'_>], notes: &[String], how: &RenderAs<'_>) -> Value {
    let design = is_design(shown);
    let cands: Vec<Value> = shown
        .iter()
        .map(|r| {
            let c = r.candidate;
            let mut o = Map::new();
            o.insert("rank".into(), json!(r.rank));
            if !design {
                o.insert("row".into(), json!(c.row + 1));
            }
            if let Some(l) = &r.label {
                o.insert("id".into(), json!(l));
            }
            {
                let m: Map<String, Value> = r
                    .inputs
                    .iter()
                    .map(|(n, v)| (n.clone(), json!(v)))
                    .collect();
                o.insert("inputs".into(), Value::Object(m));
            }
            if let Some(sc) = r.score {
                o.insert("score".into(), json!(sc));
            }
            let est: Map<String, Value> = c
                .estimates
                .iter()
                .map(|e| (e.target.clone(), json!(e.estimate)))
                .collect();
            o.insert("estimates".into(), Value::Object(est));
            o.insert("requirements".into(), json!(c.requirements));
            o.insert("joint_probability".into(), json!(c.joint_probability));
            if let Some(e) = c.joint_mc_error {
                o.insert("joint_probability_se".into(), json!(e));
            }
            o.insert("cost_per_tonne".into(), json!(c.cost_per_tonne));
            o.insert("carbon_equivalent".into(), json!(c.carbon_equivalent));
            o.insert("violations".into(), json!(c.violations));
            o.insert("in_domain".into(), json!(c.in_domain));
            o.insert("domain".into(), json!(c.level.name()));
            o.insert("notes".into(), json!(c.notes));
            Value::Object(o)
        })
        .collect();
    json!({
        "kind": how.kind,
        "id_column": how.id_column,
        "caution": CAUTION,
        "joint_probability_assumption": s.joint_statement(),
        "joint_probability_basis": s.joint_basis().name(),
        "joint_correlations": s.joint_pairs(),
        "requirements": s.requirements().iter().map(|r| r.to_string()).collect::<Vec<_>>(),
        "currency": s.costs().map(|c| c.currency.clone()),
        "carbon_equivalent_limit": s.limits().max_ce.map(|(i, m)| json!({"index": i.name(), "max": m})),
        "candidates": cands,
        "notes": notes,
    })
}
