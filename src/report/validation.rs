//! The cross-validation section of the report and the chart of
//! out-of-fold estimates against measured values (also written by
//! `mettle validate --svg`).

use super::{esc, figure, table};
use crate::chart::{padded, xy_svg, Line, Mark, Points, XyChart, BLUE, GREY};
use crate::error::Result;
use crate::validate::{Figure, TargetValidation, Validation};

/// `value ± se` with four significant figures.
pub fn with_se(f: &Figure) -> String {
    format!("{} ± {}", super::fmt(f.value), super::fmt(f.se))
}

/// Header of the table of cross-validated figures.
pub const FIGURE_HEADER: [&str; 8] = [
    "target",
    "n",
    "rmse",
    "mae",
    "r2",
    "nlpd",
    "coverage_68",
    "coverage_95",
];

/// One target's row of [`FIGURE_HEADER`].
pub fn figure_row(t: &TargetValidation) -> Vec<String> {
    vec![
        t.target.clone(),
        t.n.to_string(),
        with_se(&t.rmse),
        with_se(&t.mae),
        with_se(&t.r2),
        with_se(&t.nlpd),
        with_se(&t.coverage_68),
        with_se(&t.coverage_95),
    ]
}

/// Estimated against measured for the out-of-fold rows of the first repeat
/// (each row once), bars the central 95 % intervals.
///
/// # Errors
/// [`crate::Error::Plot`].
pub fn out_of_fold_svg(t: &TargetValidation) -> Result<String> {
    let rows: Vec<_> = t.rows.iter().filter(|r| r.repeat == 1).collect();
    let (lo, hi) = padded(
        rows.iter()
            .flat_map(|r| [r.measured, r.lo95, r.hi95].into_iter()),
    );
    let chart = XyChart {
        title: format!("Out-of-fold estimates against measured, {}", t.target),
        x_label: format!("measured {}", t.label),
        y_label: format!("estimated {}", t.label),
        points: vec![Points {
            label: "out-of-fold rows (95 % interval)".into(),
            xy: rows.iter().map(|r| (r.measured, r.mean)).collect(),
            y_err: rows.iter().map(|r| (r.lo95, r.hi95)).collect(),
            mark: Mark::Circle,
            colour: BLUE,
        }],
        lines: vec![Line {
            label: Some("estimate = measured".into()),
            xy: vec![(lo, lo), (hi, hi)],
            colour: GREY,
            dashed: false,
        }],
        x_range: Some((lo, hi)),
        y_range: Some((lo, hi)),
        ..Default::default()
    };
    xy_svg(&chart)
}

/// The report section: settings, the figures with their standard errors,
/// the relevance range over folds and the chart, per target.
///
/// # Errors
/// [`crate::Error::Plot`].
pub fn section(v: &Validation) -> Result<String> {
    let mut h = String::from("<section id=\"validation\">\n<h2>Cross-validation</h2>\n");
    h.push_str(&format!(
        "<p>{} rows of {} in {} folds{}{}, seed {}: each fold's model was trained as <code>train</code> trains on the other folds and estimated the rows it never saw. ± is the standard error over folds (folds share training rows, so it is if anything too small).</p>\n",
        v.n_rows,
        esc(&v.data_file),
        v.n_folds,
        if v.n_repeats > 1 { format!(", repeated {} times", v.n_repeats) } else { String::new() },
        v.group.as_ref().map_or(String::new(), |g| format!(
            ", rows with the same '{}' kept in one fold ({} groups)",
            esc(g),
            v.n_groups
        )),
        v.seed
    ));
    let rows: Vec<Vec<String>> = v.targets.iter().map(figure_row).collect();
    h.push_str(&table(&FIGURE_HEADER, &rows, Some("validation-figures")));
    for t in &v.targets {
        if let Some(rel) = &t.relevance {
            h.push_str(&format!(
                "<h3>{}: relevance over the folds</h3>\n",
                esc(&t.target)
            ));
            h.push_str(&super::spread::relevance_range_table(rel, "the folds"));
            h.push_str(&format!(
                "<p class=\"note\">{}</p>\n",
                esc(crate::explain::RELEVANCE_MEANING)
            ));
        }
        h.push_str(&figure(
            &format!("fig-validation-{}", super::id_part(&t.target)),
            &out_of_fold_svg(t)?,
            "Each mark is one row estimated by the fold model that never saw it: measured across, estimate up, the bar its central 95 % interval. This is what to expect on new heats like these; the estimates on training rows are optimistic.",
        ));
    }
    h.push_str("</section>\n");
    Ok(h)
}
