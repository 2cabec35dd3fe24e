//! `mettle explain`

use std::path::PathBuf;

use clap::Args;
use mettle::explain::{model_card, scale_words, ModelCard, TargetCard};

use super::evaluate::EvalFormat;
use super::output::{aligned, emit, num};

/// Arguments of `mettle explain`.
#[derive(Args, Debug)]
#[command(
    about = "Show a model's card: training data, noise level, committee members and input relevance.",
    long_about = "Show what a trained model knows about itself: the model card.\n\n\
It lists the training data's fingerprint and row count, each input's training range and unit, \
and per target: the fitted noise sd in the target's units (under noise that varies with the \
inputs: its median, smallest and largest value over the training rows) beside the measured \
replicate scatter of repeat tests when the training data had any; how the noise sd moves along \
the most relevant input (the training rows in up to five bins of about equal count, each with \
its median fitted noise sd and, where the bin holds repeat tests, their pooled sd, the one \
measurement of the scatter that no model stands between); the committee members (hidden \
units, log evidence, held-out NLPD, effective number of parameters γ); and the relevance of each \
input from its ARD hyperparameter, σ_w = α^−½ averaged over the members (of every partition, each \
member once, for a model trained with --partitions above 1), most relevant input = 1. \
Relevance says how much the networks use an input; it is not a causal effect, a slope or a sign.\n\n\
JSON output: an object with data_file, data_sha256, n_rows, tool_version, seed, inputs (each \
with name, unit, min, max, log_scale), set_aside and targets; each target has name, unit, scale, \
n_rows, n_missing, min, max, noise_sd, noise_sd_range, noise_varies, noise_basis, replicate_sd \
(null without repeat tests), noise_profile (input, input_unit and bins with lo, hi, n_rows, \
noise_sd and replicates; null in older model files), members (each with n_hidden, restart, \
log_evidence, heldout_nlpd, gamma, n_weights, varying_noise, and partition — 1-based — only for a \
model trained with --partitions above 1), relevance (an object input → \
value, or null without ARD), relevance_range (an array of input, value, low, high: the smallest \
and largest over the members; null without ARD), relevance_by_column (only for a model with inputs \
declared as codes: an object column → value, each code's indicator relevances summed), relevance_note, fit_notes (plain notes on \
likely overfitting or underfitting; empty when nothing is flagged), search_rows, \
hidden_searched, candidates (tried, discarded), stopped_early (candidates the search stopped at a \
rung, not trained to the end), nlpd_by_size, kriging (null when the residuals are not kriged; \
else n_rows, correlated_share, length_scales as [input, share of its range] pairs, \
heldout_nlpd_with and heldout_nlpd_without) and gross_errors (null without that part; else \
share, n_heldout, heldout_nlpd_gaussian, heldout_nlpd, refit_gross_rows, n_rows, \
refit_fallbacks — the list of members that kept the Gaussian refit, with the reason, as in the \
model file —, tail_dof, share_estimated); partitions only for a model trained with --partitions \
above 1: [variance rule (under correlated with its rho: \"correlated, rho 0.5\"), list of partition, n_members, heldout_nlpd, noise_varies, kriged, \
gross_share, tail_dof], the search, process and gross-error fields above then being partition 1's.\n\n\
Example:\n  mettle explain --model uts.json\n  mettle explain --model uts.json --format json"
)]
pub struct ExplainArgs {
    /// Model file written by `mettle train`.
    #[arg(long, value_name = "MODEL.json")]
    model: PathBuf,
    /// Output format.
    #[arg(long, value_enum, default_value_t = EvalFormat::Table)]
    format: EvalFormat,
    /// Write to this file (atomically) instead of standard output.
    #[arg(long, value_name = "FILE")]
    out: Option<PathBuf>,
}

/// The card as text: the data and its inputs, then each target's part.
fn text(card: &ModelCard) -> String {
    let mut s = inputs_text(card);
    for t in &card.targets {
        s += &target_text(t);
    }
    s
}

/// Where the model came from and its inputs' training ranges.
fn inputs_text(card: &ModelCard) -> String {
    let mut s = format!(
        "model trained by mettle {} on {} ({} rows, seed {})\nfingerprint {}\n\ninputs:\n",
        card.tool_version, card.data_file, card.n_rows, card.seed, card.data_sha256
    );
    let rows: Vec<Vec<String>> = card
        .inputs
        .iter()
        .map(|i| {
            vec![
                i.name.clone(),
                num(i.min),
                num(i.max),
                if i.log_scale { "log" } else { "linear" }.into(),
                i.unit.clone().unwrap_or_else(|| "as in the file".into()),
            ]
        })
        .collect();
    let h: Vec<String> = ["input", "min", "max", "scale", "unit"]
        .iter()
        .map(|x| x.to_string())
        .collect();
    s += &aligned(&h, &rows);
    for (n, why) in &card.set_aside {
        s += &format!("set aside: {n} ({why})\n");
    }
    s
}

/// One target: its rows and range, noise, search and committee, the
/// residual process and gross errors, input relevance and fit notes.
fn target_text(t: &TargetCard) -> String {
    let unit = t
        .unit
        .clone()
        .unwrap_or_else(|| "(unit of the training file)".into());
    let mut s = format!(
        "\ntarget {}: {} rows ({} without a value left out), range {} to {} {unit}, learnt {}\n",
        t.name,
        t.n_rows,
        t.n_missing,
        num(t.min),
        num(t.max),
        scale_words(&t.scale)
    );
    s += &noise_text(t, &unit);
    s += &committee_text(t);
    if let Some(k) = &t.kriging {
        s += &format!("  {}\n", k.sentence());
    }
    if let Some(k) = &t.gross_errors {
        s += &format!("  {}\n", k.sentence());
    }
    s += &relevance_text(t);
    s += &format!("  {}\n", t.relevance_note);
    for n in &t.fit_notes {
        s += &format!("  note: {n}\n");
    }
    s
}

/// The fitted noise sd beside the measured replicate scatter, and the
/// noise sd along the most relevant input.
fn noise_text(t: &TargetCard, unit: &str) -> String {
    let mut s = format!("  noise sd {} {unit}", num(t.noise_sd));
    if t.noise_sd_range.0.to_bits() != t.noise_sd_range.1.to_bits() {
        s += &format!(
            " (from {} to {} over the training rows)",
            num(t.noise_sd_range.0),
            num(t.noise_sd_range.1)
        );
    }
    s += &format!(": {}\n", t.noise_basis);
    s += &match &t.replicate_sd {
        Some(r) => format!(
            "  measured replicate scatter: pooled sd {} {unit} ({} groups of repeat tests, {} degrees of freedom)\n",
            num(r.pooled_sd), r.n_groups, r.dof
        ),
        None => "  measured replicate scatter: none (no repeat tests in the training rows)\n".into(),
    };
    let Some(p) = &t.noise_profile else {
        return s;
    };
    let iu = p
        .input_unit
        .as_deref()
        .map_or(String::new(), |u| format!(" {u}"));
    s += &format!(
        "  noise sd along {} (the most relevant input), training rows in {} bins:\n",
        p.input,
        p.bins.len()
    );
    let rows: Vec<Vec<String>> = p
        .bins
        .iter()
        .map(|b| {
            vec![
                format!("  {} to {}{iu}", num(b.lo), num(b.hi)),
                b.n_rows.to_string(),
                num(b.noise_sd),
                b.replicates.as_ref().map_or("-".into(), |r| {
                    format!("{} ({} dof)", num(r.pooled_sd), r.dof)
                }),
            ]
        })
        .collect();
    let h: Vec<String> = [
        format!("  {}", p.input),
        "rows".into(),
        format!("noise_sd {unit}"),
        format!("replicate_sd {unit}"),
    ]
    .to_vec();
    s += &aligned(&h, &rows);
    s
}

/// The candidate search and the committee's members.
fn committee_text(t: &TargetCard) -> String {
    let mut s = format!(
        "  search: hidden units {}..{}, {} candidates ({} discarded, {} stopped early), {} rows to train and {} held out\n  committee of {}:\n",
        t.hidden_searched.0, t.hidden_searched.1, t.candidates.0, t.candidates.1,
        t.stopped_early, t.search_rows.0, t.search_rows.1, t.members.len()
    );
    if let Some((rule, parts)) = &t.partitions {
        s += &format!(
            "  {} partitions averaged (whole trainings, seeds seed + 0 … seed + {}), variance rule '{rule}'; the search above and the process and gross errors are partition 1's:\n",
            parts.len(),
            parts.len() - 1
        );
        for p in parts {
            s += &format!(
                "    partition {}: {} members, held-out NLPD {:.3}, noise {}{}{}\n",
                p.partition,
                p.n_members,
                p.heldout_nlpd,
                if p.noise_varies {
                    "varying"
                } else {
                    "constant"
                },
                if p.kriged { ", residuals kriged" } else { "" },
                match (p.gross_share, p.tail_dof) {
                    (Some(g), Some(nu)) =>
                        format!(", gross errors {:.1} %, Student-t {nu}", 100.0 * g),
                    (Some(g), None) => format!(", gross errors {:.1} %", 100.0 * g),
                    _ => String::new(),
                }
            );
        }
    }
    let several = t.partitions.is_some();
    let rows: Vec<Vec<String>> = t
        .members
        .iter()
        .map(|m| {
            let mut row = vec![
                format!("  {}", m.n_hidden),
                m.restart.to_string(),
                format!("{:.3}", m.log_evidence),
                format!("{:.4}", m.heldout_nlpd),
                format!("{:.2}", m.gamma),
                if m.varying_noise {
                    "varies"
                } else {
                    "constant"
                }
                .into(),
            ];
            if let (true, Some(p)) = (several, m.partition) {
                row.push(p.to_string());
            }
            row
        })
        .collect();
    let mut h: Vec<String> = [
        "  hidden",
        "restart",
        "log_evidence",
        "heldout_nlpd",
        "gamma",
        "noise",
    ]
    .iter()
    .map(|x| x.to_string())
    .collect();
    if several {
        h.push("partition".into());
    }
    s += &aligned(&h, &rows);
    s
}

/// Input relevance, most relevant first, with its range over the members
/// (nothing without ARD).
fn relevance_text(t: &TargetCard) -> String {
    let Some(r) = &t.relevance_range else {
        return String::new();
    };
    let mut s =
        "  input relevance (most relevant = 1), with its range over the committee members:\n"
            .to_string();
    let mut ranked = r.clone();
    ranked.sort_by(|a, b| b.value.total_cmp(&a.value));
    let rows: Vec<Vec<String>> = ranked
        .iter()
        .map(|r| {
            vec![
                format!("  {}", r.input),
                format!("{:.3}", r.value),
                format!("{:.3} to {:.3}", r.low, r.high),
            ]
        })
        .collect();
    let h = vec![
        "  input".to_string(),
        "relevance".to_string(),
        "members".to_string(),
    ];
    s += &aligned(&h, &rows);
    if let Some(by) = &t.relevance_by_column {
        s += "  relevance per column of the table (a code's indicator relevances summed):\n";
        let rows: Vec<Vec<String>> = by
            .ranked()
            .iter()
            .map(|(n, v)| vec![format!("  {n}"), format!("{v:.3}")])
            .collect();
        s += &aligned(&["  column".to_string(), "relevance".to_string()], &rows);
    }
    s
}

pub fn run(a: ExplainArgs) -> anyhow::Result<()> {
    let model = super::load_model(&a.model)?;
    let card = model_card(&model);
    let out = match a.format {
        EvalFormat::Json => serde_json::to_string_pretty(&card)? + "\n",
        EvalFormat::Table => text(&card),
    };
    emit(&out, a.out.as_deref())
}
