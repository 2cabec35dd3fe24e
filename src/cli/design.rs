//! `mettle design`

use std::path::PathBuf;

use anyhow::Context;
use clap::Args;
use mettle::chart::{draw_panels, Line, Mark, Points, XyChart, BLUE, GREY, ORANGE};
use mettle::data::Table;
use mettle::screen::{design, DesignOptions, DesignOutcome, DesignSpace};

use super::progress::DesignProgress;
use super::screen::{finish, render, ProblemArgs, RenderAs, Shown};
use super::{UsageError, CAUTION};

/// Arguments of `mettle design`.
#[derive(Args, Debug)]
#[command(
    about = "Search a box of compositions for diverse candidates likely to meet the requirements at low cost, inside the training domain.",
    long_about = "Search a box of inputs (--vary NAME=LOW:HIGH for each input to vary; every other input \
held by --fix NAME=VALUE or taken from the first row of --base) for candidates that maximise\n\n  \
score = P_joint − λ · (cost − least cost over the box) / (cost span of the box)\n\n\
where P_joint is the joint probability of meeting every --require (from the targets' joint predictive \
distribution, their scatter correlated as on the training rows; see `mettle screen --help`) \
and λ is --cost-weight (without --costs the score is P_joint). Points outside the training domain \
or breaking a process limit (--max-ce, the costs file's [limits]) are never returned; when the best \
point found lies outside the domain, a note says where and why, and the best in-domain candidates \
are returned instead.\n\n\
The search runs --starts particle swarms, each seeded from --seed (same options and seed, same \
result), and keeps every point evaluated; the result is --count candidates, best first, each \
differing from every better one by at least --min-separation of the box range in some varied \
input, so not copies of one optimum.\n\n\
Output: table, CSV or JSON like `mettle screen`, with the varied inputs and the score; --svg writes \
a chart of alloy cost against joint probability (every admissible point tried, the front of the \
cheapest points for each probability, the candidates returned).\n\n\
Estimates are not test results: a designed composition must be made and qualified by testing per \
the applicable code; local codes and licensed engineers have the final word.",
    after_long_help = "Example:\n  mettle design --model uts.json --model charpy.json --base candidates.csv \\\n    --require uts_mpa>=550 --require 'charpy_j>=47@test_temp_c=-40' \\\n    --vary c_wt=0.05:0.12 --vary mn_wt=0.8:1.8 --vary ni_wt=0.5:3.5 --vary mo_wt=0:0.4 \\\n    --costs datasets/fellhaven_costs.toml --max-ce 0.45 --count 8 --svg front.svg"
)]
pub struct DesignArgs {
    #[command(flatten)]
    problem: ProblemArgs,
    /// An input to vary and its range, NAME=LOW:HIGH; repeat for each.
    #[arg(long, value_name = "NAME=LOW:HIGH", required = true)]
    vary: Vec<String>,
    /// An input held at a value, NAME=VALUE; repeat for each (overrides --base).
    #[arg(long, value_name = "NAME=VALUE")]
    fix: Vec<String>,
    /// A table whose first row gives every input neither varied nor fixed.
    #[arg(long, value_name = "FILE")]
    base: Option<PathBuf>,
    /// Candidates to return.
    #[arg(long, default_value_t = 10)]
    count: usize,
    /// Seeded particle-swarm searches.
    #[arg(long, default_value_t = 6)]
    starts: usize,
    /// Particles per swarm.
    #[arg(long, default_value_t = 24)]
    particles: usize,
    /// Iterations per swarm.
    #[arg(long, default_value_t = 40)]
    iterations: u64,
    /// Seed of the search.
    #[arg(long, default_value_t = 0)]
    seed: u64,
    /// λ: probability the whole cost span of the box is worth (0 to 1).
    #[arg(long, default_value_t = 0.1)]
    cost_weight: f64,
    /// Least difference between candidates, share of the box range in some varied input.
    #[arg(long, default_value_t = 0.1)]
    min_separation: f64,
    /// Write the cost-versus-probability chart (SVG) here; needs --costs.
    #[arg(long, value_name = "FILE.svg")]
    svg: Option<PathBuf>,
    /// With --svg, also the chart as PNG beside it (FILE.png, twice the SVG's size), for slides.
    #[arg(long, requires = "svg")]
    png: bool,
    /// No progress bar.
    #[arg(long)]
    quiet: bool,
}

fn split_pair<'a>(s: &'a str, what: &str, form: &str) -> Result<(&'a str, &'a str), UsageError> {
    s.split_once('=')
        .map(|(a, b)| (a.trim(), b.trim()))
        .filter(|(a, _)| !a.is_empty())
        .ok_or_else(|| UsageError(format!("{what} '{s}': expected {form}")))
}

fn parse_num(s: &str, whole: &str, what: &str) -> Result<f64, UsageError> {
    s.trim()
        .parse::<f64>()
        .ok()
        .filter(|v| v.is_finite())
        .ok_or_else(|| UsageError(format!("{what} '{whole}': '{s}' is not a finite number")))
}

fn space(a: &DesignArgs) -> anyhow::Result<DesignSpace> {
    let mut vary = Vec::new();
    for v in &a.vary {
        let (n, r) = split_pair(v, "--vary", "NAME=LOW:HIGH, e.g. mn_wt=0.8:1.8")?;
        let (lo, hi) = r.split_once(':').ok_or_else(|| {
            UsageError(format!(
                "--vary '{v}': expected NAME=LOW:HIGH, e.g. mn_wt=0.8:1.8"
            ))
        })?;
        vary.push((
            n.to_string(),
            parse_num(lo, v, "--vary")?,
            parse_num(hi, v, "--vary")?,
        ));
    }
    let mut fixed: Vec<(String, f64)> = Vec::new();
    for f in &a.fix {
        let (n, x) = split_pair(f, "--fix", "NAME=VALUE, e.g. pwht_temp_c=0")?;
        fixed.push((n.to_string(), parse_num(x, f, "--fix")?));
    }
    if let Some(b) = &a.base {
        let t = Table::read(b)?;
        if t.n_rows() == 0 {
            return Err(
                UsageError(format!("--base {}: the table has no rows", b.display())).into(),
            );
        }
        for (i, n) in t.names().iter().enumerate() {
            if !t.is_numeric(n) || fixed.iter().any(|f| f.0 == *n) || vary.iter().any(|v| v.0 == *n)
            {
                continue;
            }
            let values = t.numeric_optional(n)?;
            if let Some(Some(v)) = values.first() {
                fixed.push((n.clone(), *v));
            }
            let _ = i;
        }
    }
    for (n, _, _) in &vary {
        if fixed.iter().any(|f| f.0 == *n) {
            return Err(UsageError(format!("'{n}' is both varied and fixed")).into());
        }
    }
    Ok(DesignSpace { fixed, vary })
}

pub fn run(a: DesignArgs) -> anyhow::Result<()> {
    let problem = a.problem.load()?;
    let screening = problem.screening()?;
    let space = space(&a)?;
    for m in problem.models.iter().filter(|m| m.schema.is_none()) {
        let missing: Vec<&str> = m
            .input_names()
            .into_iter()
            .filter(|n| {
                !space.fixed.iter().any(|f| f.0 == *n) && !space.vary.iter().any(|v| v.0 == *n)
            })
            .collect();
        if !missing.is_empty() {
            return Err(UsageError(format!(
                "inputs neither varied nor fixed: {}; give --fix NAME=VALUE for each or --base FILE",
                missing.join(", ")
            ))
            .into());
        }
    }
    if a.svg.is_some() && problem.costs.is_none() {
        return Err(UsageError("--svg draws cost against probability: give --costs".into()).into());
    }
    let options = DesignOptions {
        count: a.count,
        starts: a.starts,
        particles: a.particles,
        iterations: a.iterations,
        seed: a.seed,
        cost_weight: a.cost_weight,
        min_separation: a.min_separation,
    };
    let progress = DesignProgress::new(a.quiet);
    let outcome = design(&screening, &space, &options, &progress).context("design search")?;
    let shown: Vec<Shown<'_>> = outcome
        .candidates
        .iter()
        .enumerate()
        .map(|(k, d)| Shown {
            rank: Some(k + 1),
            label: None,
            inputs: space
                .vary
                .iter()
                .zip(&d.values)
                .map(|((n, _, _), v)| (n.clone(), *v))
                .collect(),
            candidate: &d.candidate,
            score: Some(d.score),
        })
        .collect();
    let mut notes = outcome.notes.clone();
    notes.push(format!(
        "{} points evaluated ({} seeded searches, seed {}); score = P_joint{}",
        outcome.n_evaluated,
        a.starts,
        a.seed,
        if problem.costs.is_some() {
            format!(" − {} · cost share of the box's cost span", a.cost_weight)
        } else {
            String::new()
        }
    ));
    if let Some(path) = &a.svg {
        let svg = front_svg(
            &outcome,
            problem.costs.as_ref().map_or("", |c| c.currency.as_str()),
        )?;
        for p in super::chart_file::write_chart(path, &svg, a.png)
            .with_context(|| format!("writing {}", path.display()))?
        {
            eprintln!("chart written: {}", p.display());
        }
    }
    if outcome.candidates.is_empty() {
        eprintln!("warning: no candidate returned (see the notes)");
    }
    let text = render(
        &screening,
        &shown,
        &notes,
        &RenderAs {
            kind: "design",
            id_column: None,
            format: a.problem.format,
            digits: a.problem.digits(),
        },
    )?;
    finish(&text, a.problem.format, a.problem.out.as_deref())
}

/// Points drawn at most, so the chart stays small.
const MAX_POINTS_DRAWN: usize = 1500;

fn front_svg(o: &DesignOutcome, currency: &str) -> anyhow::Result<String> {
    let pts: Vec<(f64, f64)> = o
        .evaluated
        .iter()
        .filter_map(|(_, c, p)| c.map(|c| (c, *p)))
        .collect();
    let step = pts.len().div_ceil(MAX_POINTS_DRAWN).max(1);
    let tried: Vec<(f64, f64)> = pts.iter().step_by(step).copied().collect();
    // the front: cheapest point for each probability level, by cost
    let mut sorted = pts.clone();
    sorted.sort_by(|a, b| a.0.total_cmp(&b.0).then(b.1.total_cmp(&a.1)));
    let mut front: Vec<(f64, f64)> = Vec::new();
    for p in sorted {
        if front.last().is_none_or(|l| p.1 > l.1) {
            front.push(p);
        }
    }
    let chosen: Vec<(f64, f64)> = o
        .candidates
        .iter()
        .filter_map(|d| {
            d.candidate
                .cost_per_tonne
                .map(|c| (c, d.candidate.joint_probability))
        })
        .collect();
    let chart = XyChart {
        title: "Design: alloy cost against joint probability (estimates, not test results)".into(),
        x_label: format!("alloy cost per tonne ({currency})"),
        y_label: "joint probability of meeting the requirements (0 to 1)".into(),
        points: vec![
            Points {
                label: "points tried (in domain, within limits)".into(),
                xy: tried,
                y_err: Vec::new(),
                mark: Mark::Cross,
                colour: GREY,
            },
            Points {
                label: "candidates returned".into(),
                xy: chosen,
                y_err: Vec::new(),
                mark: Mark::Triangle,
                colour: ORANGE,
            },
        ],
        lines: vec![Line {
            label: Some("front: highest probability for the cost".into()),
            xy: front,
            colour: BLUE,
            dashed: false,
        }],
        y_range: Some((0.0, 1.0)),
        ..Default::default()
    };
    Ok(draw_panels(
        std::slice::from_ref(&chart),
        Some(CAUTION),
        &chart.title,
    )?)
}
