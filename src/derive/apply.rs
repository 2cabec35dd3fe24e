//! A derivation computed on a table's columns ([`Derivation::apply`]):
//! column access with length checks, absent and missing values, and the
//! warnings of each formula's validity check.

use super::*;

/// Composition formula with its validity check.
type CompFormula = (fn(&Composition) -> f64, fn(&Composition) -> Vec<String>);

impl Derivation {
    /// Compute the derived column.
    ///
    /// `get(name)` returns the column with that conventional name, or `None`
    /// if the table has none; every column returned must have `n_rows`
    /// values. See the module doc for how absent and missing values are
    /// treated.
    pub fn apply(
        &self,
        get: &dyn Fn(&str) -> Option<Vec<f64>>,
        n_rows: usize,
    ) -> Result<Derived, DeriveError> {
        use carbon_equivalent as ce;
        use transformation as tr;
        let mut inputs = Inputs {
            get,
            n_rows,
            derivation: self.name(),
            assumed_zero: Vec::new(),
        };
        let comp_cols = self.columns();
        let mut by_comp =
            |formula: CompFormula| apply_composition(&mut inputs, &comp_cols, formula.0, formula.1);
        let mut out = match self {
            Derivation::CeIiw => by_comp((ce::ce_iiw, ce::check_ce_iiw))?,
            Derivation::Pcm => by_comp((ce::pcm, ce::check_pcm))?,
            Derivation::Cet => by_comp((ce::cet, ce::check_cet))?,
            Derivation::Cen => by_comp((ce::cen, ce::check_cen))?,
            Derivation::MsAndrews => by_comp((tr::ms_andrews, tr::check_andrews))?,
            Derivation::MsStevenHaynes => by_comp((tr::ms_steven_haynes, tr::check_steven_haynes))?,
            Derivation::Ac1Andrews => by_comp((tr::ac1_andrews, tr::check_andrews))?,
            Derivation::Ac3Andrews => by_comp((tr::ac3_andrews, tr::check_andrews))?,
            Derivation::HeatInput { process } => apply_heat_input(&mut inputs, *process)?,
            Derivation::T85 { factors } => apply_t85(&mut inputs, *factors)?,
        };
        out.assumed_zero = inputs.assumed_zero;
        Ok(out)
    }
}

/// Column access with length checks.
struct Inputs<'a> {
    get: &'a dyn Fn(&str) -> Option<Vec<f64>>,
    n_rows: usize,
    derivation: &'static str,
    assumed_zero: Vec<String>,
}

impl Inputs<'_> {
    fn fetch(&self, name: &str) -> Result<Option<Vec<f64>>, DeriveError> {
        match (self.get)(name) {
            Some(col) if col.len() != self.n_rows => Err(DeriveError::LengthMismatch {
                derivation: self.derivation.to_string(),
                column: name.to_string(),
                expected: self.n_rows,
                found: col.len(),
            }),
            other => Ok(other),
        }
    }

    fn required(&self, name: &str) -> Result<Vec<f64>, DeriveError> {
        self.fetch(name)?.ok_or_else(|| DeriveError::MissingColumn {
            derivation: self.derivation.to_string(),
            column: name.to_string(),
        })
    }
}

fn missing_required(row: usize, column: &str, derivation: &str) -> RowWarning {
    RowWarning {
        row,
        message: format!("{derivation}: value of {column} is missing; not computed"),
    }
}

fn apply_composition(
    inputs: &mut Inputs<'_>,
    columns: &[ColumnUse],
    formula: fn(&Composition) -> f64,
    check: fn(&Composition) -> Vec<String>,
) -> Result<Derived, DeriveError> {
    let mut cols: Vec<(ColumnUse, Vec<f64>)> = Vec::new();
    for col in columns {
        if col.optional {
            match inputs.fetch(col.name)? {
                Some(v) => cols.push((*col, v)),
                // a column read only for the validity check enters no formula
                None if col.check_only => {}
                None => inputs.assumed_zero.push(col.name.to_string()),
            }
        } else {
            cols.push((*col, inputs.required(col.name)?));
        }
    }
    let mut out = Derived {
        values: Vec::with_capacity(inputs.n_rows),
        ..Derived::default()
    };
    for row in 0..inputs.n_rows {
        let mut comp = Composition::default();
        let mut complete = true;
        for (col, values) in &cols {
            let x = values[row];
            if x.is_finite() {
                comp.set(col.name, x);
            } else if col.optional {
                let what = if col.check_only {
                    "its validity limit is not judged"
                } else {
                    "taken as 0 wt%"
                };
                out.warnings.push(RowWarning {
                    row,
                    message: format!(
                        "{}: value of {} is missing; {what}",
                        inputs.derivation, col.name
                    ),
                });
            } else {
                complete = false;
                out.warnings
                    .push(missing_required(row, col.name, inputs.derivation));
            }
        }
        if complete {
            out.values.push(formula(&comp));
            out.warnings.extend(
                check(&comp)
                    .into_iter()
                    .map(|message| RowWarning { row, message }),
            );
        } else {
            out.values.push(f64::NAN);
        }
    }
    Ok(out)
}

fn apply_heat_input(
    inputs: &mut Inputs<'_>,
    process: Option<ArcProcess>,
) -> Result<Derived, DeriveError> {
    let u = inputs.required("voltage")?;
    let i = inputs.required("current")?;
    let v = inputs.required("travel_speed")?;
    let k_col = inputs.fetch("arc_efficiency")?;
    if k_col.is_none() && process.is_none() {
        return Err(DeriveError::NoArcEfficiency);
    }
    let fallback = process.map(ArcProcess::efficiency);
    let name = inputs.derivation;
    let mut out = Derived::default();
    for row in 0..inputs.n_rows {
        let mut complete = true;
        for (col, values) in [("voltage", &u), ("current", &i), ("travel_speed", &v)] {
            if !values[row].is_finite() {
                complete = false;
                out.warnings.push(missing_required(row, col, name));
            }
        }
        let k = match k_col.as_ref().map(|c| c[row]) {
            Some(k) if k.is_finite() => Some(k),
            Some(_) => {
                match fallback {
                    Some(kf) => out.warnings.push(RowWarning {
                        row,
                        message: format!(
                            "{name}: value of arc_efficiency is missing; k = {kf} of the process used"
                        ),
                    }),
                    None => out.warnings.push(missing_required(row, "arc_efficiency", name)),
                }
                fallback
            }
            None => fallback,
        };
        let Some(k) = k.filter(|_| complete) else {
            out.values.push(f64::NAN);
            continue;
        };
        match heat_input::domain_error(k, u[row], i[row], v[row]) {
            Some(reason) => {
                out.values.push(f64::NAN);
                out.warnings.push(RowWarning {
                    row,
                    message: format!("{name}: {reason}; not computed"),
                });
            }
            None => out
                .values
                .push(heat_input::arc_heat_input(k, u[row], i[row], v[row])),
        }
    }
    Ok(out)
}

fn apply_t85(inputs: &mut Inputs<'_>, factors: ShapeFactors) -> Result<Derived, DeriveError> {
    let q = inputs.required("heat_input")?;
    let t0 = inputs.required("preheat")?;
    let d = inputs.required("thickness")?;
    let name = inputs.derivation;
    let mut out = Derived::default();
    for row in 0..inputs.n_rows {
        let mut complete = true;
        for (col, values) in [("heat_input", &q), ("preheat", &t0), ("thickness", &d)] {
            if !values[row].is_finite() {
                complete = false;
                out.warnings.push(missing_required(row, col, name));
            }
        }
        if !complete {
            out.values.push(f64::NAN);
            continue;
        }
        match cooling_time::cooling_time(q[row], t0[row], d[row], factors) {
            Ok(ct) => {
                out.values.push(ct.t85);
                out.warnings.extend(
                    cooling_time::check_cooling_time(q[row], t0[row], d[row])
                        .into_iter()
                        .map(|message| RowWarning { row, message }),
                );
            }
            Err(e) => {
                out.values.push(f64::NAN);
                out.warnings.push(RowWarning {
                    row,
                    message: format!("{name}: {e}; not computed"),
                });
            }
        }
    }
    Ok(out)
}
