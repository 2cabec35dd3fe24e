//! The summary that opens the report: per target the rows, the accuracy
//! with its unit, the coverage, the noise level, the main inputs and a
//! one-line verdict on the error bars.

use super::effects::main_inputs;
use super::{esc, Ctx};
use crate::fixedmath::FixedMath;

/// A value to three significant digits, for the summary.
fn sig3(v: f64) -> String {
    if !v.is_finite() || v == 0.0 {
        return format!("{v}");
    }
    let d = (2 - v.abs().log10_fixed().floor() as i32).max(0) as usize;
    format!("{v:.d$}")
}
use crate::explain::CalibrationPoint;

/// Rows below which a calibration curve is too noisy to judge (the
/// binomial sd of a 95 % level is then above 5 points; common practice,
/// no source).
const MIN_ROWS_TO_JUDGE: usize = 20;

/// A one-line verdict on a calibration curve: honest when every level's
/// observed share lies within 2 binomial sd of its nominal share;
/// otherwise the level furthest out, too narrow or too wide.
pub fn calibration_verdict(curve: &[CalibrationPoint]) -> String {
    let Some(first) = curve.first() else {
        return "no rows to judge".into();
    };
    if first.n < MIN_ROWS_TO_JUDGE {
        return format!("{} rows: too few to judge the error bars", first.n);
    }
    let z = |c: &CalibrationPoint| (c.observed - c.nominal) / c.binomial_sd.max(1e-12);
    let worst = curve
        .iter()
        .max_by(|a, b| z(a).abs().total_cmp(&z(b).abs()))
        .unwrap_or(first);
    let pct = |v: f64| format!("{:.0} %", 100.0 * v);
    if z(worst).abs() <= 2.0 {
        "honest: every level within 2 binomial sd of its nominal coverage".into()
    } else if worst.observed < worst.nominal {
        format!(
            "too narrow: the central {} interval holds {} of rows",
            pct(worst.nominal),
            pct(worst.observed)
        )
    } else {
        format!(
            "too wide: the central {} interval holds {} of rows",
            pct(worst.nominal),
            pct(worst.observed)
        )
    }
}

/// The summary table.
pub(super) fn summary_section(ctx: &Ctx<'_>) -> String {
    let mut s = String::from("<table id=\"summary-table\">\n<tr><th>target</th><th>training rows</th><th>judged on</th><th>RMSE</th><th>inside the 95 % interval</th><th>noise sd</th><th>main inputs</th><th>error bars</th></tr>\n");
    for (k, t) in ctx.card.targets.iter().enumerate() {
        let u = super::unit_of(ctx.model, &t.name);
        let ps = ctx.parts(k);
        // held-out rows judge best; the training rows when there are too
        // few of them to judge the error bars
        let judged = ps
            .iter()
            .rev()
            .find(|p| p.rows.rows.len() >= MIN_ROWS_TO_JUDGE)
            .or(ps.last());
        let (on, rmse, cover, verdict) =
            match judged.and_then(|p| p.rows.evaluation().map(|e| (p, e))) {
                Some((p, e)) => (
                    format!("{} {}", e.n, p.name),
                    format!("{} {u}", sig3(e.rmse)),
                    format!("{:.0} %", 100.0 * e.coverage_95),
                    calibration_verdict(&p.rows.calibration()),
                ),
                None => ("no table given".into(), "—".into(), "—".into(), "—".into()),
            };
        s.push_str(&format!(
            "<tr><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{} {}</td><td>{}</td><td>{}</td></tr>\n",
            esc(&t.name),
            t.n_rows,
            esc(&on),
            esc(&rmse),
            esc(&cover),
            sig3(t.noise_sd),
            esc(&u),
            esc(&main_inputs(ctx, k).join(", ")),
            esc(&verdict)
        ));
    }
    s.push_str("</table>\n");
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    fn point(nominal: f64, observed: f64, n: usize) -> CalibrationPoint {
        CalibrationPoint {
            nominal,
            observed,
            n,
            binomial_sd: (nominal * (1.0 - nominal) / n as f64).sqrt(),
        }
    }

    #[test]
    fn verdicts_follow_the_binomial_band() {
        // 400 rows: the 95 % level's binomial sd is √(0.95·0.05/400) ≈ 1.1 %
        assert!(
            calibration_verdict(&[point(0.5, 0.52, 400), point(0.95, 0.94, 400)])
                .starts_with("honest")
        );
        let v = calibration_verdict(&[point(0.5, 0.5, 400), point(0.95, 0.88, 400)]);
        assert!(
            v.starts_with("too narrow") && v.contains("95 %") && v.contains("88 %"),
            "{v}"
        );
        assert!(calibration_verdict(&[point(0.68, 0.85, 400)]).starts_with("too wide"));
        assert!(calibration_verdict(&[point(0.5, 0.1, 8)]).contains("too few"));
    }
}
