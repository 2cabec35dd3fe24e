//! `mettle sweep` and `mettle transition`

use std::path::PathBuf;

use clap::Args;
use mettle::curves::{
    base_row, parse_set, sweep, sweep_map_svg, sweep_svg, transition, transition_svg, Axis,
    Requirement, Sweep, TransitionOptions, DEFAULT_STEPS_1D, DEFAULT_STEPS_2D,
};
use mettle::data::{write_atomic, Table};
use mettle::Model;

use super::chart_file::write_chart;
use super::output::{csv_field, emit, num};
use super::{UsageError, CAUTION};

/// Arguments of `mettle sweep`.
#[derive(Args, Debug)]
#[command(
    about = "Vary one input (or two) with the others held at a base heat: curve or map with bands.",
    long_about = "Vary one input of a model over a range while the other inputs are held at a base heat, \
and estimate every target along the way with 68 % and 95 % bands. A second --vary gives a 2-D map.\n\n\
The base heat is the first row of --base, with --set values on top; an input given nowhere is held \
at its training median (said on stderr). Each point carries the domain guard's verdict: in the CSV \
the in_domain column and notes; in the SVG the out-of-domain stretch is dashed over a grey \
background (a map draws one panel per target, or per --target: contours labelled with their \
values, cells shaded by the error bar with its scale beside, out-of-domain cells hatched). Physically impossible estimates (negative energy, \
elongation above 100 %) are flagged in the *_impossible column and the notes, never clipped.\n\n\
CSV columns: the varied inputs, then per target <t>_centre, <t>_mean, <t>_sd, <t>_lo68, <t>_hi68, \
<t>_lo95, <t>_hi95, <t>_impossible, then in_domain, distance_ratio, support, notes.\n\n\
Estimates are not test results: qualification testing per the applicable code decides.",
    after_long_help = "Example:\n  mettle sweep --model uts.json --vary mn=0.5:1.8:27 --base heat.csv --out mn.csv --plot mn.svg"
)]
pub struct SweepArgs {
    /// Model file written by `mettle train`.
    #[arg(long, value_name = "MODEL.json")]
    model: PathBuf,
    /// Input to vary: NAME=FROM:TO[:STEPS] (41 steps for a curve, 21 per axis for a map). Twice for a map.
    #[arg(long, value_name = "NAME=FROM:TO[:STEPS]", required = true)]
    vary: Vec<String>,
    /// Table whose first row is the base heat.
    #[arg(long, value_name = "FILE")]
    base: Option<PathBuf>,
    /// Hold an input at a value (repeatable), on top of --base.
    #[arg(long, value_name = "NAME=VALUE")]
    set: Vec<String>,
    /// Write the CSV here instead of standard output.
    #[arg(long, value_name = "FILE.csv")]
    out: Option<PathBuf>,
    /// Draw the curve (or map) as SVG.
    #[arg(long, value_name = "FILE.svg")]
    plot: Option<PathBuf>,
    /// With --plot, also the chart as PNG beside it (FILE.png, twice the SVG's size), for slides.
    #[arg(long, requires = "plot")]
    png: bool,
    /// Draw only this target (repeatable; every target by default).
    #[arg(long, value_name = "NAME")]
    target: Vec<String>,
}

fn load_base(
    model: &Model,
    base: Option<&PathBuf>,
    set: &[String],
) -> anyhow::Result<mettle::curves::BaseRow> {
    let table = base.map(|p| Table::read(p)).transpose()?;
    let set: Vec<(String, f64)> = set.iter().map(|s| parse_set(s)).collect::<Result<_, _>>()?;
    let b = base_row(model, table.as_ref(), &set)?;
    for n in &b.1 {
        eprintln!("note: {n}");
    }
    Ok(b)
}

/// The sweep as CSV.
fn sweep_csv(s: &Sweep) -> String {
    let mut h: Vec<String> = s.axes.iter().map(|a| a.name.clone()).collect();
    for t in &s.targets {
        for f in [
            "centre",
            "mean",
            "sd",
            "lo68",
            "hi68",
            "lo95",
            "hi95",
            "impossible",
        ] {
            h.push(format!("{t}_{f}"));
        }
    }
    h.extend(["in_domain", "distance_ratio", "support", "notes"].map(String::from));
    let mut out: String = h.iter().map(|x| csv_field(x)).collect::<Vec<_>>().join(",");
    out.push('\n');
    for p in &s.points {
        let mut c: Vec<String> = p.at.iter().map(|v| v.to_string()).collect();
        for b in &p.bands {
            c.extend(
                [b.median, b.mean, b.sd, b.lo68, b.hi68, b.lo95, b.hi95].map(|v| v.to_string()),
            );
            c.push(b.impossible.to_string());
        }
        c.push(p.verdict.in_domain.to_string());
        c.push(
            p.verdict
                .distance_ratio
                .map_or(String::new(), |v| v.to_string()),
        );
        c.push(p.verdict.support.map_or(String::new(), |v| v.to_string()));
        c.push(csv_field(&p.notes.join("; ")));
        out.push_str(&c.join(","));
        out.push('\n');
    }
    out
}

fn write_plot(path: &std::path::Path, svg: &str, png: bool) -> anyhow::Result<()> {
    for p in write_chart(path, svg, png)? {
        eprintln!("wrote {}", p.display());
    }
    Ok(())
}

fn warn_out(s: &Sweep) {
    let out = s.points.iter().filter(|p| !p.verdict.in_domain).count();
    if out > 0 {
        eprintln!(
            "warning: {out} of {} points are outside the training domain (in_domain = false; see notes)",
            s.points.len()
        );
    }
    let imp = s
        .points
        .iter()
        .filter(|p| p.bands.iter().any(|b| b.impossible))
        .count();
    if imp > 0 {
        eprintln!("warning: {imp} points have physically impossible estimates (shown as computed, not clipped)");
    }
}

pub fn run(a: SweepArgs) -> anyhow::Result<()> {
    let model = super::load_model(&a.model)?;
    if a.vary.len() > 2 {
        return Err(UsageError("--vary at most twice (a curve or a map)".into()).into());
    }
    let steps = if a.vary.len() == 2 {
        DEFAULT_STEPS_2D
    } else {
        DEFAULT_STEPS_1D
    };
    let axes: Vec<Axis> = a
        .vary
        .iter()
        .map(|v| Axis::parse(v, steps))
        .collect::<Result<_, _>>()?;
    let base = load_base(&model, a.base.as_ref(), &a.set)?;
    let s = sweep(&model, base, &axes)?;
    if let Some(p) = &a.plot {
        let mut chosen = Vec::new();
        for t in &a.target {
            let k = s.targets.iter().position(|n| n == t).ok_or_else(|| {
                UsageError(format!(
                    "--target {t}: not a target of the model ({})",
                    s.targets.join(", ")
                ))
            })?;
            chosen.push(k);
        }
        let svg = if axes.len() == 1 {
            let mut one = s.clone();
            if !chosen.is_empty() {
                one.targets = chosen.iter().map(|&k| s.targets[k].clone()).collect();
                for p in &mut one.points {
                    p.bands = chosen.iter().map(|&k| p.bands[k].clone()).collect();
                }
            }
            sweep_svg(&model, &one, CAUTION)?
        } else {
            sweep_map_svg(&model, &s, &chosen, CAUTION)?
        };
        write_plot(p, &svg, a.png)?;
    }
    warn_out(&s);
    eprintln!("{CAUTION}");
    emit(&sweep_csv(&s), a.out.as_deref())
}

/// Arguments of `mettle transition`.
#[derive(Args, Debug)]
#[command(
    about = "Charpy transition curve of a heat, with T27J/T40J intervals and the chance of meeting a requirement.",
    long_about = "For an impact-energy model with the test temperature as an input: the transition curve of \
one heat with 68 % and 95 % bands, the temperatures at which it crosses each --energy (T27J, T40J ...) \
and, with --require, the probability that the heat meets a grade requirement.\n\n\
The crossing intervals come from the committee's predictive distribution: whole curves are drawn \
(a member at random, its parameter uncertainty and the test scatter; seeded) and the central 95 % \
of their crossings is reported, not the crossing of the band edges. P(single test) counts the test \
scatter; P(mean) only the model's uncertainty about the heat's mean energy.\n\n\
The curve goes to --out as CSV (as `mettle sweep`), the summary to standard output.\n\n\
Estimates are not test results: qualification testing per the applicable code decides.",
    after_long_help = "Example:\n  mettle transition --model kv.json --temperature-input test_temp_c --base heat.csv \
--from -80 --to 40 --energy 27,40 --require J2 --plot kv.svg"
)]
pub struct TransitionArgs {
    /// Model file written by `mettle train`.
    #[arg(long, value_name = "MODEL.json")]
    model: PathBuf,
    /// The input holding the test temperature (°C).
    #[arg(long, value_name = "NAME")]
    temperature_input: String,
    /// The impact-energy target (needed when the model has several).
    #[arg(long, value_name = "NAME")]
    target: Option<String>,
    /// Table whose first row is the heat.
    #[arg(long, value_name = "FILE")]
    base: Option<PathBuf>,
    /// Hold an input at a value (repeatable), on top of --base.
    #[arg(long, value_name = "NAME=VALUE")]
    set: Vec<String>,
    /// Coldest temperature (default: the training minimum of the temperature input).
    #[arg(long, value_name = "T", allow_hyphen_values = true)]
    from: Option<f64>,
    /// Warmest temperature (default: the training maximum).
    #[arg(long, value_name = "T", allow_hyphen_values = true)]
    to: Option<f64>,
    /// Energies whose crossing temperatures are wanted (J).
    #[arg(
        long,
        value_name = "E,E…",
        value_delimiter = ',',
        default_value = "27,40"
    )]
    energy: Vec<f64>,
    /// Grade requirement: ENERGY@TEMPERATURE (27@-20) or JR, J0, J2, K2 (EN 10025-2).
    #[arg(long, value_name = "E@T|GRADE", allow_hyphen_values = true)]
    require: Option<String>,
    /// Temperatures on the curve.
    #[arg(long, value_name = "N", default_value_t = 161)]
    steps: usize,
    /// Curves drawn for the intervals.
    #[arg(long, value_name = "N", default_value_t = 4000)]
    samples: usize,
    /// Seed of the draws.
    #[arg(long, value_name = "N", default_value_t = 1)]
    seed: u64,
    /// Write the curve as CSV.
    #[arg(long, value_name = "FILE.csv")]
    out: Option<PathBuf>,
    /// Draw the curve as SVG: the energy target only, the --energy levels as lines with the
    /// crossing temperatures' 95 % intervals on them, the requirement's point with its probability.
    #[arg(long, value_name = "FILE.svg")]
    plot: Option<PathBuf>,
    /// With --plot, also the chart as PNG beside it (FILE.png, twice the SVG's size), for slides.
    #[arg(long, requires = "plot")]
    png: bool,
    /// Print the summary as JSON.
    #[arg(long)]
    json: bool,
}

/// A temperature with its unit, or "not reached".
fn celsius(v: Option<f64>) -> String {
    v.map_or("not reached".into(), |x| format!("{} °C", num(x)))
}

pub fn run_transition(a: TransitionArgs) -> anyhow::Result<()> {
    let model = super::load_model(&a.model)?;
    let inp = model.inputs.iter().find(|i| i.name == a.temperature_input);
    let (from, to) = match (a.from, a.to, inp) {
        (Some(f), Some(t), _) => (f, t),
        (f, t, Some(i)) => (f.unwrap_or(i.min), t.unwrap_or(i.max)),
        _ => {
            return Err(UsageError(format!(
                "--temperature-input {}: not an input of the model ({}); give --from and --to for a schema column",
                a.temperature_input,
                model.input_names().join(", ")
            ))
            .into())
        }
    };
    let requirement = a.require.as_deref().map(Requirement::parse).transpose()?;
    let base = load_base(&model, a.base.as_ref(), &a.set)?;
    let o = TransitionOptions {
        temperature_input: a.temperature_input.clone(),
        target: a.target.clone(),
        from,
        to,
        steps: a.steps,
        energies: a.energy.clone(),
        requirement,
        samples: a.samples,
        seed: a.seed,
    };
    let t = transition(&model, base, &o)?;
    if let Some(p) = &a.out {
        write_atomic(p, sweep_csv(&t.curve).as_bytes())?;
        eprintln!("wrote {}", p.display());
    }
    if let Some(p) = &a.plot {
        write_plot(p, &transition_svg(&model, &t, CAUTION)?, a.png)?;
    }
    warn_out(&t.curve);
    for n in &t.notes {
        eprintln!("note: {n}");
    }
    let text = if a.json {
        let v = t.summary_json(from, to);
        format!("{}\n", serde_json::to_string_pretty(&v)?)
    } else {
        let mut s = format!(
            "transition of {} against {} ({} to {} °C); intervals from {} drawn curves (seed {})\n",
            t.curve.targets[t.target], a.temperature_input, from, to, a.samples, a.seed
        );
        for c in &t.crossings {
            // an end the drawn curves do not reach inside the range is said
            // in words, not as a number
            let interval = match (c.lo95, c.hi95) {
                (Some(lo), Some(hi)) => format!("95 % interval {} to {} °C", num(lo), num(hi)),
                (Some(lo), None) => format!(
                    "95 % interval from {} °C to beyond the range (its upper end is not reached by {} °C)",
                    num(lo),
                    to
                ),
                (None, Some(hi)) => format!(
                    "95 % interval up to {} °C (its lower end lies below the range's {} °C)",
                    num(hi),
                    from
                ),
                (None, None) => "95 % interval not within the range".to_string(),
            };
            s.push_str(&format!(
                "T{}J: centre curve {}, median {}, {interval} ({:.0} % of curves cross)\n",
                c.energy,
                celsius(c.centre),
                celsius(c.median),
                100.0 * c.reached
            ));
        }
        if let Some((r, ps, pm)) = &t.requirement {
            s.push_str(&format!(
                "requirement {}: P(single test meets it) {:.3}, P(mean energy meets it) {:.3}\n",
                r.label, ps, pm
            ));
        }
        s.push_str(CAUTION);
        s.push('\n');
        s
    };
    emit(&text, None)
}
