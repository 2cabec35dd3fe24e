//! The effect of each main input: a curve through the model along the
//! input's training range with the other inputs held at their training
//! medians, with its 68 % and 95 % bands (an individual-conditional-
//! expectation curve at the median heat, in the sense of Goldstein et al.,
//! "Peeking inside the black box", J. Comput. Graph. Stat. 24, 2015; not
//! an average over the rows as Friedman's partial dependence is).

use super::{esc, figure, id_part, Ctx};
use crate::chart::xy_svg;
use crate::curves::{base_row, effect_chart, sweep, Axis};
use crate::data::Table;
use crate::error::Result;

/// Main inputs shown per target.
pub(super) const MAIN_INPUTS: usize = 3;

/// Points along each effect curve.
const STEPS: usize = 31;

/// The `MAIN_INPUTS` most relevant inputs of target `k` (the first inputs
/// when relevance is unknown).
pub(super) fn main_inputs(ctx: &Ctx<'_>, k: usize) -> Vec<String> {
    // a declared code has levels, not a curve (its indicators are skipped)
    let quantity = |n: &str| ctx.model.code_of_input(n).is_none();
    match &ctx.card.targets[k].relevance {
        Some(r) => r
            .ranked()
            .into_iter()
            .filter(|p| quantity(&p.0))
            .take(MAIN_INPUTS)
            .map(|p| p.0)
            .collect(),
        None => ctx
            .model
            .inputs
            .iter()
            .filter(|i| quantity(&i.name))
            .take(MAIN_INPUTS)
            .map(|i| i.name.clone())
            .collect(),
    }
}

/// The median heat: the median of every numeric column of `table`.
fn median_heat(table: &Table) -> Vec<(String, f64)> {
    let mut out = Vec::new();
    for name in table.names() {
        if !table.is_numeric(name) {
            continue;
        }
        let Ok(v) = table.numeric_optional(name) else {
            continue;
        };
        let mut v: Vec<f64> = v.into_iter().flatten().filter(|x| x.is_finite()).collect();
        if v.is_empty() {
            continue;
        }
        v.sort_by(f64::total_cmp);
        let m = v.len() / 2;
        let median = if v.len() % 2 == 1 {
            v[m]
        } else {
            0.5 * (v[m - 1] + v[m])
        };
        out.push((name.clone(), median));
    }
    out
}

/// Effect curves of the main inputs, a grid per target.
pub(super) fn effects_section(ctx: &Ctx<'_>) -> Result<String> {
    let mut s = String::from(
        "<p>How each target moves along its most relevant inputs, the others held at their medians in the table given: the line is the centre estimate, the bands its 68 % and 95 % intervals, dashed and shaded grey where the domain guard finds the point outside the training data. The curves show what the model has learnt, not a measured effect: inputs that vary together in the data cannot be told apart by it.</p>\n",
    );
    // the heat the curves pass through: the medians of the table given (a
    // model read through a schema needs its raw columns), else the
    // training medians the model keeps
    let mut heat = ctx.table.map(median_heat).unwrap_or_default();
    // a declared code is held at its most frequent training level, never
    // at a median between levels
    for code in &ctx.model.codes {
        if let Some(l) = code.levels.iter().max_by_key(|l| l.training_rows) {
            heat.retain(|(n, _)| *n != code.name);
            heat.push((code.name.clone(), l.code as f64));
            s.push_str(&format!(
                "<p>{} is a code: the curves hold it at its most frequent training level, {} = {}; no curve is drawn along a code.</p>\n",
                esc(&code.name),
                l.code,
                esc(&l.name)
            ));
        }
    }
    if ctx.table.is_none() && ctx.model.schema.is_some() {
        s.push_str(&super::no_rows("the effect curves (a model trained through a schema needs a table to hold the other columns at)"));
        return Ok(s);
    }
    for (k, t) in ctx.model.targets.iter().enumerate() {
        s.push_str(&format!(
            "<h3>{}</h3>\n<div class=\"grid\">\n",
            esc(&t.name)
        ));
        for name in main_inputs(ctx, k) {
            let Some(inp) = ctx.model.inputs.iter().find(|i| i.name == name) else {
                continue;
            };
            if inp.max.total_cmp(&inp.min).is_le() {
                continue;
            }
            let axis = Axis {
                name: name.clone(),
                from: inp.min,
                to: inp.max,
                steps: STEPS,
            };
            let sw = sweep(ctx.model, base_row(ctx.model, None, &heat)?, &[axis])?;
            let mut chart = effect_chart(ctx.model, &sw, k);
            chart.title = format!("{} along {name}", t.name);
            chart.size = Some((320, 250));
            for b in &mut chart.bands {
                b.label = String::new();
            }
            for l in &mut chart.lines {
                l.label = None;
            }
            s.push_str(&figure(
                &format!("fig-effect-{}-{}", id_part(&t.name), id_part(&name)),
                &xy_svg(&chart)?,
                "",
            ));
        }
        s.push_str("</div>\n");
    }
    Ok(s)
}
