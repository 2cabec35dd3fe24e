//! Relevance with its spread, as a table under the relevance chart.

use super::{esc, table};
use crate::explain::RelevanceRange;

/// Inputs from most to least relevant with the smallest and largest value
/// over `over` (the committee members, or the folds of a cross-validation).
pub fn relevance_range_table(r: &[RelevanceRange], over: &str) -> String {
    let mut ranked = r.to_vec();
    ranked.sort_by(|a, b| b.value.total_cmp(&a.value));
    let body: Vec<Vec<String>> = ranked
        .iter()
        .map(|r| {
            vec![
                r.input.clone(),
                format!("{:.2}", r.value),
                format!("{:.2} to {:.2}", r.low, r.high),
            ]
        })
        .collect();
    table(&["input", "relevance", &format!("range over {over}")], &body, None)
        + &format!(
            "<p class=\"note\">A wide range means the {} lean on the input differently: its rank is not settled by the data.</p>\n",
            esc(over)
        )
}
