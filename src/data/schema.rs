//! The schema file: what each column of a table of test records is, in
//! which unit it was written, which values it may take, which targets are
//! learnt through a transform, and which inputs are derived from others.
//!
//! The format is TOML, of this project's own design, described in full in
//! `docs/schema.md`:
//!
//! ```toml
//! mettle_schema = 1
//!
//! [[column]]
//! name = "mn_wt"
//! role = "input"          # input | target | auxiliary | identifier | ignored
//! unit = "wt%"
//! stands_for = "Mn"       # the conventional name derivations read
//! min = 0.0
//! max = 2.5
//!
//! [[column]]
//! name = "charpy_ftlbf"
//! role = "target"
//! unit = "ft*lbf"
//! transform = "log"       # none | log | bounded
//!
//! [[derived]]
//! spec = "ce_iiw"         # as accepted by Derivation::parse
//! name = "CE"             # optional; default the derivation's own column name
//! ```
//!
//! Reading a table through a schema ([`Schema::prepare`]) converts every
//! value to the internal unit of its quantity ([`crate::units`]), checks
//! it, computes the derived inputs and returns a numeric table ready for
//! training or estimation. Every problem is an error naming file, row and
//! column; nothing is filled in.

use std::collections::BTreeMap;
use std::path::Path;

use serde::{Deserialize, Serialize};

use crate::data::Table;
use crate::derive::{Composition, Derivation, RowWarning};
use crate::error::{Error, Result};
use crate::prec::{BOUNDED_MARGIN_DEFAULT, COMPOSITION_SUM_SLACK};
use crate::transform::TargetTransform;
use crate::units::{Quantity, Unit};

/// The schema format version this build reads and writes.
pub const SCHEMA_VERSION: u64 = 1;

/// What a column is for.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Role {
    /// Given to the networks.
    Input,
    /// Learnt: one committee per target.
    Target,
    /// Read and checked like an input, used only to compute derived inputs.
    Auxiliary,
    /// Names a record (heat, weld, specimen); never used as a number.
    Identifier,
    /// Not read.
    Ignored,
}

impl Role {
    /// The role's name as written in a schema.
    pub fn name(self) -> &'static str {
        match self {
            Role::Input => "input",
            Role::Target => "target",
            Role::Auxiliary => "auxiliary",
            Role::Identifier => "identifier",
            Role::Ignored => "ignored",
        }
    }

    /// Whether the column is read as numbers.
    pub fn is_numeric(self) -> bool {
        matches!(self, Role::Input | Role::Target | Role::Auxiliary)
    }
}

/// The transform a target is learnt through, as written in a schema.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum TransformChoice {
    /// Learnt as it is.
    #[default]
    None,
    /// Learnt on the log scale (values must be > 0).
    Log,
    /// Learnt on a logit scale between the column's `min` and `max`.
    Bounded,
}

impl TransformChoice {
    fn is_none(&self) -> bool {
        *self == TransformChoice::None
    }
}

/// What the values of a numeric column are.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ColumnKind {
    /// A quantity: a number on a scale, interpolated between values.
    #[default]
    Quantity,
    /// A code: each integer (or its name) stands for one level, and the
    /// levels have no order or distance. An input of this kind is given to
    /// the networks as one indicator column per level (1 at that level, 0
    /// elsewhere), named [`indicator_name`].
    Levels,
}

impl ColumnKind {
    fn is_quantity(&self) -> bool {
        *self == ColumnKind::Quantity
    }
}

/// The name of the indicator column of level `level` of code input
/// `column`: `column=level` (e.g. `glazing=uniform`).
pub fn indicator_name(column: &str, level: &str) -> String {
    format!("{column}={level}")
}

/// One column of the table.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ColumnSpec {
    /// The column's header in the file.
    pub name: String,
    /// What it is for.
    pub role: Role,
    /// The unit the file is written in; required for numeric roles.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub unit: Option<Unit>,
    /// The conventional name a derivation reads this column as (an element
    /// symbol such as `Mn`, or `voltage`, `current`, `travel_speed`,
    /// `arc_efficiency`, `heat_input`, `preheat`, `thickness`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub stands_for: Option<String>,
    /// Smallest allowed value, in `unit`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub min: Option<f64>,
    /// Largest allowed value, in `unit`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max: Option<f64>,
    /// For a target: the scale it is learnt on.
    #[serde(default, skip_serializing_if = "TransformChoice::is_none")]
    pub transform: TransformChoice,
    /// For a bounded target: the widening of [min, max] on each side, as a
    /// share of max − min (default [`BOUNDED_MARGIN_DEFAULT`]).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub margin: Option<f64>,
    /// For an input: a quantity (the default) or a code with named levels.
    #[serde(default, skip_serializing_if = "ColumnKind::is_quantity")]
    pub kind: ColumnKind,
    /// For `kind = "levels"`: each integer code and its level's name, as
    /// `levels = { 0 = "none", 1 = "even" }`.
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub levels: BTreeMap<String, String>,
    /// For a code: the name of a level already told by other inputs (no
    /// glazing, told by a glazing area of 0): it gets no indicator column,
    /// its rows are those with every indicator 0.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub implied_level: Option<String>,
}

impl ColumnSpec {
    /// The unit, or dimensionless when none was given.
    pub fn unit_or_1(&self) -> Unit {
        self.unit.unwrap_or(Unit::Dimensionless)
    }

    /// The internal unit values are converted to.
    pub fn internal_unit(&self) -> Unit {
        Unit::internal_for(self.unit_or_1().quantity())
    }

    /// The target transform on the internal scale.
    pub fn target_transform(&self) -> TargetTransform {
        match self.transform {
            TransformChoice::None => TargetTransform::Identity,
            TransformChoice::Log => TargetTransform::Log,
            TransformChoice::Bounded => {
                let u = self.unit_or_1();
                // validate() makes sure both bounds exist for a bounded target
                let a = u.to_internal(self.min.unwrap_or(0.0));
                let b = u.to_internal(self.max.unwrap_or(1.0));
                let share = self.margin.unwrap_or(BOUNDED_MARGIN_DEFAULT);
                TargetTransform::Bounded {
                    lower: a,
                    upper: b,
                    margin: share * (b - a),
                }
            }
        }
    }

    /// Whether the column is an input declared as a code.
    pub fn is_code(&self) -> bool {
        self.kind == ColumnKind::Levels
    }

    /// The declared levels, `(code, name)`, in increasing code (keys that
    /// are not integers are left out; `validate` refuses them).
    pub fn level_list(&self) -> Vec<(i64, String)> {
        let mut out: Vec<(i64, String)> = self
            .levels
            .iter()
            .filter_map(|(k, v)| k.trim().parse::<i64>().ok().map(|c| (c, v.clone())))
            .collect();
        out.sort_by_key(|l| l.0);
        out
    }

    /// The declared levels as text: `0 = none, 1 = even`.
    pub fn levels_text(&self) -> String {
        self.level_list()
            .iter()
            .map(|(c, n)| format!("{c} = {n}"))
            .collect::<Vec<_>>()
            .join(", ")
    }

    /// The code a cell of a code column holds: a declared level's name or
    /// its integer code; `None` for anything else.
    pub fn code_of_cell(&self, text: &str) -> Option<i64> {
        let t = text.trim();
        let levels = self.level_list();
        if let Some((c, _)) = levels.iter().find(|(_, n)| n == t) {
            return Some(*c);
        }
        let x: f64 = t.parse().ok()?;
        levels
            .iter()
            .find(|(c, _)| (*c as f64).total_cmp(&x).is_eq())
            .map(|(c, _)| *c)
    }

    fn bounds_text(&self) -> String {
        let u = self.unit_or_1().symbol();
        match (self.min, self.max) {
            (Some(lo), Some(hi)) => format!("{lo} to {hi} {u}"),
            (Some(lo), None) => format!("at least {lo} {u}"),
            (None, Some(hi)) => format!("at most {hi} {u}"),
            (None, None) => "any value".into(),
        }
    }
}

/// One derived input.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DerivedSpec {
    /// The derivation, e.g. `ce_iiw`, `heat_input:SAW`, `t85:butt_fill`.
    pub spec: Derivation,
    /// Name of the new column; default the derivation's own.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub name: Option<String>,
}

impl DerivedSpec {
    /// Name of the column it adds.
    pub fn column_name(&self) -> String {
        self.name
            .clone()
            .unwrap_or_else(|| self.spec.output_column().to_string())
    }

    /// Unit of the column it adds.
    pub fn unit(&self) -> Unit {
        // every derivation's output unit is a unit mettle knows
        Unit::parse(self.spec.output_unit()).unwrap_or(Unit::Dimensionless)
    }
}

/// A schema: the columns of a table and the inputs derived from them.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Schema {
    /// Format version; always [`SCHEMA_VERSION`].
    pub mettle_schema: u64,
    /// The columns, in the order inputs are given to the networks.
    #[serde(default, rename = "column")]
    pub columns: Vec<ColumnSpec>,
    /// Derived inputs, computed in this order (a later one may read an
    /// earlier one: `t85` reads the `heat_input` derived before it).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub derived: Vec<DerivedSpec>,
    /// The column whose equal values mark rows of one record tested
    /// several times (a heat at several test temperatures, a weld cut into
    /// several specimens): `mettle validate` keeps each group in one fold.
    /// It must be a declared column of role identifier or ignored.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub group: Option<String>,
}

/// The conventional names derivations read, with the quantity of each.
pub fn conventional_quantity(name: &str) -> Option<Quantity> {
    if Composition::ELEMENTS.contains(&name) {
        return Some(Quantity::Composition);
    }
    Some(match name {
        "voltage" => Quantity::Voltage,
        "current" => Quantity::Current,
        "travel_speed" => Quantity::TravelSpeed,
        "arc_efficiency" => Quantity::Dimensionless,
        "heat_input" => Quantity::HeatInput,
        "preheat" => Quantity::Temperature,
        "thickness" => Quantity::Length,
        _ => return None,
    })
}

/// Every conventional name, for messages.
pub fn conventional_names() -> String {
    let mut v: Vec<&str> = Composition::ELEMENTS.to_vec();
    v.extend([
        "voltage",
        "current",
        "travel_speed",
        "arc_efficiency",
        "heat_input",
        "preheat",
        "thickness",
    ]);
    v.join(", ")
}

/// Where a derivation finds a conventional column.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Provider {
    /// A schema column (index into [`Schema::columns`]).
    Column(usize),
    /// An earlier derived input (index into [`Schema::derived`]).
    Derived(usize),
}

/// How a table is to be read through a schema.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct PrepareOptions {
    /// Targets and identifiers must be present (training, evaluation);
    /// when false (estimation) they are read if present.
    pub need_targets: bool,
    /// Leave out rows that lack an input value instead of failing.
    pub drop_incomplete_rows: bool,
}

/// A table read through a schema.
#[derive(Clone, Debug, PartialEq)]
pub struct Prepared {
    /// Numeric table in internal units: inputs, derived inputs, then the
    /// targets present, each under its column name.
    pub table: Table,
    /// Network inputs in order: the input columns, then the derived ones.
    pub inputs: Vec<String>,
    /// Targets present, with the transform each is learnt through.
    pub targets: Vec<(String, TargetTransform)>,
    /// Rows of the file (1-based) left out for a missing input.
    pub dropped_rows: Vec<usize>,
    /// Per target present, the rows of the file (1-based, among those
    /// kept) without a value: left out for that target only.
    pub missing_targets: Vec<(String, Vec<usize>)>,
    /// Derivation warnings (validity ranges); `row` is 0-based in the file.
    pub row_warnings: Vec<RowWarning>,
    /// Warnings about the table as a whole (columns not in the schema,
    /// elements taken as absent by a derivation).
    pub notes: Vec<String>,
}

/// Values of the numeric columns as read and converted, with the problems
/// found.
#[derive(Debug)]
pub(crate) struct Checked {
    /// Per schema column: converted values (internal units), or `None` for
    /// a column not read (absent, identifier, ignored).
    pub values: Vec<Option<Vec<Option<f64>>>>,
    /// Problems in the order found.
    pub problems: Vec<Error>,
}

/// Derived columns computed from checked values.
#[derive(Debug, Default)]
pub(crate) struct DerivedColumns {
    /// Per derived input, its values (`None` where not computed).
    pub values: Vec<Vec<Option<f64>>>,
    /// Validity-range warnings (0-based rows).
    pub row_warnings: Vec<RowWarning>,
    /// Per derived input and row, why the value could not be computed.
    pub not_computed: Vec<Vec<Option<String>>>,
    /// Elements taken as absent.
    pub notes: Vec<String>,
}

impl Schema {
    /// Parse schema TOML; `name` is used in messages.
    ///
    /// # Errors
    /// [`Error::Schema`] for malformed TOML, unknown keys, roles, units
    /// (listing the known ones) or transforms, and for any inconsistency
    /// found by [`Schema::validate`].
    pub fn from_toml(text: &str, name: &str) -> Result<Schema> {
        let schema: Schema = toml::from_str(text).map_err(|e| Error::Schema {
            path: name.to_string(),
            // the parser's excerpt keeps its lines (the caret under the
            // column), indented under the file's name
            message: e
                .to_string()
                .trim_end()
                .lines()
                .map(|l| format!("\n  {l}"))
                .collect(),
        })?;
        schema.validate(name)?;
        Ok(schema)
    }

    /// Read a schema file.
    ///
    /// # Errors
    /// [`Error::Io`] when unreadable; otherwise as [`Schema::from_toml`].
    pub fn load(path: &Path) -> Result<Schema> {
        let text = std::fs::read_to_string(path).map_err(|source| Error::Io {
            path: path.display().to_string(),
            source,
        })?;
        Self::from_toml(&text, &path.display().to_string())
    }

    /// Check the schema for consistency.
    ///
    /// # Errors
    /// [`Error::Schema`] naming the column and what is allowed.
    pub fn validate(&self, name: &str) -> Result<()> {
        let bad = |message: String| Error::Schema {
            path: name.to_string(),
            message,
        };
        if self.mettle_schema != SCHEMA_VERSION {
            return Err(bad(format!(
                "mettle_schema = {}: this mettle reads schema version {SCHEMA_VERSION}",
                self.mettle_schema
            )));
        }
        if self.columns.is_empty() {
            return Err(bad(
                "no [[column]] entries: declare at least one column".into()
            ));
        }
        let mut seen: Vec<&str> = Vec::new();
        for c in &self.columns {
            let col = |m: String| bad(format!("column '{}': {m}", c.name));
            if c.name.trim().is_empty() {
                return Err(bad("a column has an empty name".into()));
            }
            if seen.contains(&c.name.as_str()) {
                return Err(col("declared twice".into()));
            }
            seen.push(&c.name);
            self.validate_column(c).map_err(col)?;
        }
        let indicators: Vec<String> = self
            .columns
            .iter()
            .filter(|c| c.is_code())
            .flat_map(|c| {
                c.level_list()
                    .into_iter()
                    .map(|(_, l)| indicator_name(&c.name, &l))
            })
            .collect();
        if let Some(clash) = indicators.iter().find(|n| seen.contains(&n.as_str())) {
            return Err(bad(format!(
                "column '{clash}' has the name of a code's indicator column: rename one of them"
            )));
        }
        if let Some(g) = &self.group {
            match self.columns.iter().find(|c| &c.name == g) {
                None => {
                    return Err(bad(format!(
                        "group = \"{g}\" names no declared column: declare it with role \"identifier\""
                    )))
                }
                Some(c) if !matches!(c.role, Role::Identifier | Role::Ignored) => {
                    return Err(bad(format!(
                        "group = \"{g}\": column '{g}' has role {}; a group column names records, so give it role \"identifier\"",
                        c.role.name()
                    )))
                }
                Some(_) => {}
            }
        }
        self.validate_derived(&mut seen).map_err(bad)
    }

    /// The checks of one column (its name already checked), as the message
    /// after "column 'NAME': ".
    fn validate_column(&self, c: &ColumnSpec) -> std::result::Result<(), String> {
        if c.is_code() || !c.levels.is_empty() || c.implied_level.is_some() {
            return validate_code(c);
        }
        if c.role.is_numeric() && c.unit.is_none() {
            return Err(format!(
                "role {} needs a unit (write unit = \"1\" for a pure number); known units: {}",
                c.role.name(),
                Unit::known_list()
            ));
        }
        for (k, v) in [("min", c.min), ("max", c.max), ("margin", c.margin)] {
            if v.is_some_and(|x| !x.is_finite()) {
                return Err(format!("{k} must be a finite number"));
            }
        }
        if let (Some(lo), Some(hi)) = (c.min, c.max) {
            if lo >= hi {
                return Err(format!("min = {lo} must be below max = {hi}"));
            }
        }
        if (c.min.is_some() || c.max.is_some()) && !c.role.is_numeric() {
            return Err(format!(
                "bounds are for input, target and auxiliary columns, not {}",
                c.role.name()
            ));
        }
        if c.transform != TransformChoice::None && c.role != Role::Target {
            return Err(format!(
                "transform is for targets only (this column is {})",
                c.role.name()
            ));
        }
        match c.transform {
            TransformChoice::Log if c.unit_or_1().quantity() == Quantity::Temperature => {
                return Err(
                    "a log transform needs a quantity with a true zero; a temperature has none (use transform = \"bounded\" or none)".into(),
                )
            }
            TransformChoice::Bounded if c.min.is_none() || c.max.is_none() => {
                return Err(
                    "transform = \"bounded\" needs both min and max: the interval the values are confined to".into(),
                )
            }
            _ => {}
        }
        if let Some(m) = c.margin {
            if c.transform != TransformChoice::Bounded {
                return Err("margin is for bounded targets only".into());
            }
            if !(m > 0.0 && m < 0.5) {
                return Err(format!(
                    "margin = {m}: expected a share of the interval between 0 and 0.5 (default {BOUNDED_MARGIN_DEFAULT})"
                ));
            }
        }
        if let Some(s) = &c.stands_for {
            let Some(q) = conventional_quantity(s) else {
                return Err(format!(
                    "stands_for = \"{s}\" is not a name derivations read; known names: {}",
                    conventional_names()
                ));
            };
            if !matches!(c.role, Role::Input | Role::Auxiliary) {
                return Err("stands_for is for input and auxiliary columns".into());
            }
            if c.unit_or_1().quantity() != q {
                return Err(format!(
                    "stands_for = \"{s}\" is a {q}, but unit {} measures {}",
                    c.unit_or_1(),
                    c.unit_or_1().quantity()
                ));
            }
            if self
                .columns
                .iter()
                .filter(|o| o.stands_for.as_deref() == Some(s.as_str()))
                .count()
                > 1
            {
                return Err(format!(
                    "stands_for = \"{s}\" is given to more than one column"
                ));
            }
        }
        Ok(())
    }

    /// The checks of the derived inputs: each a new name (added to `seen`),
    /// each column it reads present with the right quantity; as the message.
    fn validate_derived<'a>(&'a self, seen: &mut Vec<&'a str>) -> std::result::Result<(), String> {
        for (k, d) in self.derived.iter().enumerate() {
            let out = d.column_name();
            let der = |m: String| format!("derived '{out}' ({}): {m}", d.spec.spec());
            if seen.contains(&out.as_str()) {
                return Err(der(
                "its name is already a column or an earlier derived input; give it another with name = \"...\"".into(),
            ));
            }
            seen.push(
                self.derived[k]
                    .name
                    .as_deref()
                    .unwrap_or(d.spec.output_column()),
            );
            for use_ in d.spec.columns() {
                match self.provider(use_.name, k) {
                    Some(Provider::Column(i)) => {
                        let c = &self.columns[i];
                        let q = conventional_quantity(use_.name);
                        if q.is_some_and(|q| q != c.unit_or_1().quantity()) {
                            return Err(der(format!(
                                "reads column '{}' as {}, but its unit {} is not a {}",
                                c.name,
                                use_.name,
                                c.unit_or_1(),
                                q.map_or("number", |q| q.name())
                            )));
                        }
                    }
                    Some(Provider::Derived(_)) => {}
                    None if use_.optional => {}
                    None => {
                        return Err(der(format!(
                    "needs {}: declare an input or auxiliary column with stands_for = \"{}\"",
                    use_.name, use_.name
                )))
                    }
                }
            }
        }
        Ok(())
    }

    /// Where derived input number `before` finds the conventional column
    /// `conventional`: a column declared with that `stands_for`, else an
    /// input or auxiliary column of exactly that name without a
    /// `stands_for`, else an earlier derived input of that conventional name.
    pub fn provider(&self, conventional: &str, before: usize) -> Option<Provider> {
        if let Some(i) = self
            .columns
            .iter()
            .position(|c| c.stands_for.as_deref() == Some(conventional))
        {
            return Some(Provider::Column(i));
        }
        if let Some(i) = self.columns.iter().position(|c| {
            c.name == conventional
                && c.stands_for.is_none()
                && matches!(c.role, Role::Input | Role::Auxiliary)
        }) {
            return Some(Provider::Column(i));
        }
        self.derived[..before.min(self.derived.len())]
            .iter()
            .rposition(|d| d.spec.output_column() == conventional)
            .map(Provider::Derived)
    }

    /// Columns with a role.
    pub fn with_role(&self, role: Role) -> impl Iterator<Item = &ColumnSpec> {
        self.columns.iter().filter(move |c| c.role == role)
    }

    /// The column called `name`.
    pub fn column(&self, name: &str) -> Option<&ColumnSpec> {
        self.columns.iter().find(|c| c.name == name)
    }

    /// The unit the file gives for column `name` (a derived input: the
    /// derivation's unit).
    pub fn declared_unit(&self, name: &str) -> Option<Unit> {
        self.column(name).and_then(|c| c.unit).or_else(|| {
            self.derived
                .iter()
                .find(|d| d.column_name() == name)
                .map(DerivedSpec::unit)
        })
    }

    /// Read, convert and check every numeric column, collecting at most
    /// `max_problems` problems (reading goes on past them, with bad values
    /// left out).
    pub(crate) fn check(
        &self,
        table: &Table,
        schema_name: &str,
        need_targets: bool,
        max_problems: usize,
    ) -> Checked {
        let path = table.label();
        let mut problems = Problems {
            list: Vec::new(),
            max: max_problems,
        };
        let mut values = Vec::with_capacity(self.columns.len());
        for c in &self.columns {
            let required = match c.role {
                Role::Input | Role::Auxiliary => true,
                Role::Target | Role::Identifier => need_targets,
                Role::Ignored => false,
            };
            if table.index_of(&c.name).is_none() {
                if required {
                    problems.push(Error::DeclaredColumnMissing {
                        path: path.clone(),
                        schema: schema_name.to_string(),
                        name: c.name.clone(),
                        available: table.names().join(", "),
                    });
                }
                values.push(None);
                continue;
            }
            if !c.role.is_numeric() {
                values.push(None);
                continue;
            }
            if c.is_code() {
                values.push(Some(read_code_column(c, table, &path, &mut problems)));
                continue;
            }
            let (raw, cell_problems) = match table.numeric_lenient(&c.name) {
                Ok(v) => v,
                Err(e) => {
                    problems.push(e);
                    values.push(None);
                    continue;
                }
            };
            for e in cell_problems {
                problems.push(e);
            }
            values.push(Some(convert_column(c, &raw, table, &path, &mut problems)));
        }
        self.check_composition_sums(&values, table, &path, &mut problems);
        Checked {
            values,
            problems: problems.list,
        }
    }

    /// The elements of one row cannot sum above 100 wt%: a problem for every
    /// row whose composition columns do.
    fn check_composition_sums(
        &self,
        values: &[Option<Vec<Option<f64>>>],
        table: &Table,
        path: &str,
        problems: &mut Problems,
    ) {
        let comp: Vec<usize> = (0..self.columns.len())
            .filter(|&i| {
                self.columns[i].role.is_numeric()
                    && self.columns[i].unit_or_1().quantity() == Quantity::Composition
                    && values[i].is_some()
            })
            .collect();
        if comp.is_empty() {
            return;
        }
        for row in 0..table.n_rows() {
            let parts: Vec<(usize, f64)> = comp
                .iter()
                .filter_map(|&i| values[i].as_ref().and_then(|v| v[row]).map(|x| (i, x)))
                .collect();
            let total: f64 = parts.iter().map(|p| p.1).sum();
            if total > 100.0 + COMPOSITION_SUM_SLACK {
                problems.push(Error::CompositionSum {
                    path: path.to_string(),
                    row: table.first_row() + row + 1,
                    line: table.first_row() + row + 2,
                    columns: parts
                        .iter()
                        .map(|(i, x)| format!("'{}' = {x}", self.columns[*i].name))
                        .collect::<Vec<_>>()
                        .join(", "),
                    total,
                });
            }
        }
    }

    /// Compute the derived inputs, in order, from the checked values (a
    /// missing value gives a missing derived value, with its reason).
    pub(crate) fn compute_derived(
        &self,
        values: &[Option<Vec<Option<f64>>>],
        n: usize,
        path: &str,
    ) -> Result<DerivedColumns> {
        let mut out_cols = DerivedColumns::default();
        for (k, d) in self.derived.iter().enumerate() {
            let get = |name: &str| -> Option<Vec<f64>> {
                let col = match self.provider(name, k)? {
                    Provider::Column(i) => values[i].as_ref()?,
                    Provider::Derived(j) => &out_cols.values[j],
                };
                Some(col.iter().map(|v| v.unwrap_or(f64::NAN)).collect())
            };
            let out = d.spec.apply(&get, n).map_err(|e| Error::Derive {
                path: path.to_string(),
                message: format!("derived input '{}': {e}", d.column_name()),
            })?;
            if !out.assumed_zero.is_empty() {
                out_cols.notes.push(format!(
                    "derived input '{}': no column stands for {}; taken as 0 wt% in every row",
                    d.column_name(),
                    out.assumed_zero.join(", ")
                ));
            }
            let mut why = vec![None; n];
            for w in out.warnings {
                if w.message.contains("not computed") {
                    why[w.row] = Some(w.message);
                } else {
                    out_cols.row_warnings.push(w);
                }
            }
            out_cols.values.push(
                out.values
                    .iter()
                    .map(|v| v.is_finite().then_some(*v))
                    .collect(),
            );
            out_cols.not_computed.push(why);
        }
        Ok(out_cols)
    }

    /// Read `table` through the schema: convert to internal units, check
    /// every value, compute the derived inputs, and return the numeric
    /// table the engine uses.
    ///
    /// Rows whose target is missing are kept (the engine leaves them out
    /// for that target and counts them). A row that lacks an input value,
    /// or for which a derived input cannot be computed, is an error listing
    /// the rows, unless `opts.drop_incomplete_rows`.
    ///
    /// # Errors
    /// The first problem found: [`Error::DeclaredColumnMissing`],
    /// [`Error::Cell`] (not a number, NaN or infinity, negative
    /// concentration, outside the declared bounds, outside a target
    /// transform's domain), [`Error::CompositionSum`],
    /// [`Error::Derive`], [`Error::MissingInputs`].
    pub fn prepare(
        &self,
        table: &Table,
        schema_name: &str,
        opts: PrepareOptions,
    ) -> Result<Prepared> {
        let path = table.label();
        let checked = self.check(table, schema_name, opts.need_targets, 1);
        if let Some(e) = checked.problems.into_iter().next() {
            return Err(e);
        }
        let values = checked.values;
        let n = table.n_rows();
        let mut notes: Vec<String> = table
            .names()
            .iter()
            .filter(|n| self.column(n).is_none())
            .map(|n| format!("column '{n}' is not in the schema and is not used"))
            .collect();

        let DerivedColumns {
            values: derived_values,
            mut row_warnings,
            not_computed,
            notes: derived_notes,
        } = self.compute_derived(&values, n, &path)?;
        notes.extend(derived_notes);

        // rows lacking an input value
        let incomplete = self.incomplete_rows(&values, &derived_values, &not_computed, n);
        if !incomplete.is_empty() && !opts.drop_incomplete_rows {
            return Err(missing_inputs(&incomplete, table, path));
        }
        let dropped: Vec<usize> = incomplete.iter().map(|(r, _)| *r).collect();
        let keep: Vec<usize> = (0..n).filter(|r| !dropped.contains(r)).collect();
        row_warnings.retain(|w| !dropped.contains(&w.row));

        let mut cols: Vec<(String, Vec<Option<f64>>)> = Vec::new();
        let mut inputs = Vec::new();
        for (c, v) in self.columns.iter().zip(&values) {
            if let (Role::Input, Some(v), true) = (c.role, v, c.is_code()) {
                // one indicator column per declared level (method.md §1b)
                for (code, level) in c.level_list() {
                    if c.implied_level.as_deref() == Some(level.as_str()) {
                        continue;
                    }
                    let name = indicator_name(&c.name, &level);
                    let ind = keep
                        .iter()
                        .map(|&r| {
                            v[r].map(|x| f64::from(u8::from(x.total_cmp(&(code as f64)).is_eq())))
                        })
                        .collect();
                    inputs.push(name.clone());
                    cols.push((name, ind));
                }
            } else if let (Role::Input, Some(v)) = (c.role, v) {
                inputs.push(c.name.clone());
                cols.push((c.name.clone(), keep.iter().map(|&r| v[r]).collect()));
            }
        }
        for (d, v) in self.derived.iter().zip(&derived_values) {
            inputs.push(d.column_name());
            cols.push((d.column_name(), keep.iter().map(|&r| v[r]).collect()));
        }
        let mut targets = Vec::new();
        let mut missing_targets = Vec::new();
        for (c, v) in self.columns.iter().zip(&values) {
            if let (Role::Target, Some(v)) = (c.role, v) {
                targets.push((c.name.clone(), c.target_transform()));
                cols.push((c.name.clone(), keep.iter().map(|&r| v[r]).collect()));
                missing_targets.push((
                    c.name.clone(),
                    keep.iter()
                        .filter(|&&r| v[r].is_none())
                        .map(|r| r + 1)
                        .collect(),
                ));
            }
        }
        Ok(Prepared {
            // rows keep their numbers in messages when none was left out
            table: if dropped.is_empty() {
                Table::from_optional_columns(table.source(), cols)?
                    .with_sheet(table.sheet())
                    .with_first_row(table.first_row())
            } else {
                Table::from_optional_columns(table.source(), cols)?.with_sheet(table.sheet())
            },
            inputs,
            targets,
            dropped_rows: dropped.iter().map(|r| r + 1).collect(),
            missing_targets,
            row_warnings,
            notes,
        })
    }

    /// Rows lacking an input value (0-based), with what each lacks: the
    /// input columns, else the derived inputs that could not be computed
    /// (with the reason when known).
    fn incomplete_rows(
        &self,
        values: &[Option<Vec<Option<f64>>>],
        derived_values: &[Vec<Option<f64>>],
        not_computed: &[Vec<Option<String>>],
        n: usize,
    ) -> Vec<(usize, Vec<String>)> {
        let mut incomplete: Vec<(usize, Vec<String>)> = Vec::new();
        for row in 0..n {
            let mut lacking: Vec<String> = Vec::new();
            for (c, v) in self.columns.iter().zip(values) {
                if matches!(c.role, Role::Input | Role::Auxiliary)
                    && v.as_ref().is_some_and(|v| v[row].is_none())
                {
                    lacking.push(format!("'{}'", c.name));
                }
            }
            if lacking.is_empty() {
                for (k, d) in self.derived.iter().enumerate() {
                    if derived_values[k][row].is_none() {
                        lacking.push(match &not_computed[k][row] {
                            Some(why) => format!("derived '{}' ({why})", d.column_name()),
                            None => format!("derived '{}'", d.column_name()),
                        });
                    }
                }
            }
            if !lacking.is_empty() {
                incomplete.push((row, lacking));
            }
        }
        incomplete
    }
}

/// The error for rows lacking an input value: how many, and the first
/// few with what each lacks.
fn missing_inputs(incomplete: &[(usize, Vec<String>)], table: &Table, path: String) -> Error {
    const SHOWN: usize = 10;
    let mut detail = incomplete
        .iter()
        .take(SHOWN)
        .map(|(r, cols)| {
            let r = table.first_row() + r;
            format!("row {} (line {}): {}", r + 1, r + 2, cols.join(", "))
        })
        .collect::<Vec<_>>()
        .join("; ");
    if incomplete.len() > SHOWN {
        detail.push_str(&format!("; and {} more rows", incomplete.len() - SHOWN));
    }
    Error::MissingInputs {
        path,
        n_rows: incomplete.len(),
        detail,
    }
}

/// The checks of a column declared as a code (or carrying `levels`), as
/// the message after "column 'NAME': ".
fn validate_code(c: &ColumnSpec) -> std::result::Result<(), String> {
    if !c.is_code() {
        return Err("levels are for a code: write kind = \"levels\" beside them".into());
    }
    if c.role != Role::Input {
        return Err(format!(
            "kind = \"levels\" is for input columns (this column is {})",
            c.role.name()
        ));
    }
    if c.unit.is_some_and(|u| u != Unit::Dimensionless) {
        return Err("a code has no unit: leave unit out (or write unit = \"1\")".into());
    }
    if c.min.is_some() || c.max.is_some() || c.stands_for.is_some() {
        return Err(
            "a code takes no min, max or stands_for: its levels say which values it may take"
                .into(),
        );
    }
    if c.levels.len() < 2 {
        return Err(
            "kind = \"levels\" needs at least two levels, as levels = { 0 = \"none\", 1 = \"even\" }"
                .into(),
        );
    }
    let mut names: Vec<&str> = Vec::new();
    for (k, v) in &c.levels {
        if k.trim().parse::<i64>().is_err() {
            return Err(format!("level key '{k}' is not an integer code"));
        }
        let v = v.trim();
        if v.is_empty() || v.contains([',', '=', '"']) {
            return Err(format!(
                "level {k}: name '{v}' must be non-empty, without a comma, '=' or quote"
            ));
        }
        if v.parse::<f64>().is_ok() {
            return Err(format!(
                "level {k}: name '{v}' is a number; give the level a word so a cell is never ambiguous"
            ));
        }
        if names.contains(&v) {
            return Err(format!("level name '{v}' is used twice"));
        }
        names.push(v);
    }
    if let Some(i) = &c.implied_level {
        if !names.contains(&i.as_str()) {
            return Err(format!(
                "implied_level = \"{i}\" is not one of the declared level names"
            ));
        }
    }
    let mut codes: Vec<i64> = c.level_list().iter().map(|l| l.0).collect();
    codes.dedup();
    if codes.len() != c.levels.len() {
        return Err("a level code is written twice (as 1 and 01, say)".into());
    }
    Ok(())
}

/// Read a code column's cells: each a declared level's name or integer
/// code, turned into the code; anything else is a problem naming the
/// known levels.
fn read_code_column(
    c: &ColumnSpec,
    table: &Table,
    path: &str,
    problems: &mut Problems,
) -> Vec<Option<f64>> {
    let Some(j) = table.index_of(&c.name) else {
        return Vec::new();
    };
    (0..table.n_rows())
        .map(|row| {
            let text = table.cell_text(j, row).unwrap_or_default();
            if text.trim().is_empty() {
                return None;
            }
            match c.code_of_cell(&text) {
                Some(code) => Some(code as f64),
                None => {
                    problems.push(Error::Cell {
                        path: path.to_string(),
                        row: table.first_row() + row + 1,
                        line: table.first_row() + row + 2,
                        column: c.name.clone(),
                        problem: format!(
                            "'{}' is not a declared level of this code; known levels: {}",
                            text.trim(),
                            c.levels_text()
                        ),
                    });
                    None
                }
            }
        })
        .collect()
}

/// Problems found while checking a table, at most `max` of them kept.
struct Problems {
    list: Vec<Error>,
    max: usize,
}

impl Problems {
    fn push(&mut self, e: Error) {
        if self.list.len() < self.max {
            self.list.push(e);
        }
    }
}

/// One numeric column's values `raw` (in the file's unit) converted to the
/// internal unit, each value that breaks a rule of its column left out
/// with a problem naming file, row and column: a negative concentration, a
/// value outside the declared bounds, a target value outside its
/// transform's domain.
fn convert_column(
    c: &ColumnSpec,
    raw: &[Option<f64>],
    table: &Table,
    path: &str,
    problems: &mut Problems,
) -> Vec<Option<f64>> {
    let unit = c.unit_or_1();
    let transform = c.target_transform();
    let mut converted = Vec::with_capacity(raw.len());
    for (row, v) in raw.iter().enumerate() {
        let Some(v) = *v else {
            converted.push(None);
            continue;
        };
        let cell = |problem: String| Error::Cell {
            path: path.to_string(),
            row: table.first_row() + row + 1,
            line: table.first_row() + row + 2,
            column: c.name.clone(),
            problem,
        };
        let x = unit.to_internal(v);
        let problem = if unit.quantity() == Quantity::Composition && v < 0.0 {
            Some(format!(
                "negative concentration {v} {unit}: a content cannot be below 0"
            ))
        } else if c.min.is_some_and(|lo| v < lo) || c.max.is_some_and(|hi| v > hi) {
            Some(format!(
                "{v} {unit} is outside the declared bounds {}",
                c.bounds_text()
            ))
        } else if c.role == Role::Target && transform.forward(x).is_none() {
            Some(format!(
                "{v} {unit} cannot be learnt through transform '{}': expected {}",
                transform.name(),
                transform.domain_text()
            ))
        } else {
            None
        };
        match problem {
            Some(p) => {
                problems.push(cell(p));
                converted.push(None);
            }
            None => converted.push(Some(x)),
        }
    }
    converted
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    const SCHEMA: &str = r#"
mettle_schema = 1

[[column]]
name = "id"
role = "identifier"

[[column]]
name = "c"
role = "input"
unit = "wt%"
stands_for = "C"
min = 0
max = 1

[[column]]
name = "mn"
role = "input"
unit = "wt%"
stands_for = "Mn"

[[column]]
name = "b_ppm"
role = "auxiliary"
unit = "ppm"
stands_for = "B"

[[column]]
name = "si"
role = "auxiliary"
unit = "wt%"
stands_for = "Si"

[[column]]
name = "kv"
role = "target"
unit = "ft*lbf"
transform = "log"

[[column]]
name = "elong"
role = "target"
unit = "%"
min = 0
max = 100
transform = "bounded"

[[derived]]
spec = "pcm"
"#;

    fn table(rows: &str) -> Table {
        let mut cols: Vec<(String, Vec<Option<f64>>)> = ["c", "mn", "b_ppm", "si", "kv", "elong"]
            .iter()
            .map(|n| (n.to_string(), Vec::new()))
            .collect();
        for line in rows.lines().filter(|l| !l.trim().is_empty()) {
            for (col, cell) in cols.iter_mut().zip(line.split(',')) {
                col.1.push(cell.trim().parse().ok());
            }
        }
        let mut t = Table::from_optional_columns(Path::new("mem.csv"), cols).expect("table");
        let n = t.n_rows();
        t.push_column(
            "id".into(),
            crate::data::ColumnData::Text((0..n).map(|i| Some(format!("W{i}"))).collect()),
        )
        .expect("id");
        t
    }

    #[test]
    fn converts_units_and_derives() {
        let s = Schema::from_toml(SCHEMA, "s.toml").expect("schema");
        let t = table("0.1,1.2,20,0.3,20,25\n0.12,1.4,10,0.2,50,30\n");
        let p = s
            .prepare(&t, "s.toml", PrepareOptions::default())
            .expect("prepare");
        assert_eq!(p.inputs, vec!["c", "mn", "Pcm"]);
        // 20 ft·lbf = 27.1164 J — NIST SP 811 via the trade-formulas reference [S]
        let kv = p.table.numeric("kv").expect("kv");
        assert_abs_diff_eq!(kv[0], 27.1164, epsilon = 5e-5);
        // Pcm = C + Si/30 + Mn/20 + 5B with B = 20 ppm = 0.002 wt% (Ito &
        // Bessyo 1968 via the reference [S]; arithmetic by hand)
        let pcm = p.table.numeric("Pcm").expect("pcm");
        assert_abs_diff_eq!(pcm[0], 0.1 + 0.01 + 0.06 + 0.01, epsilon = 1e-12);
        assert_eq!(p.targets[1].1.name(), "bounded");
        assert!(p.notes.iter().any(|n| n.contains("Cu")), "{:?}", p.notes);
    }

    #[test]
    fn each_bad_value_is_named() {
        let s = Schema::from_toml(SCHEMA, "s.toml").expect("schema");
        let cases = [
            (
                "0.1,1.2,20,0.3,20,25\n-0.1,1.4,10,0.2,50,30\n",
                "negative concentration",
                "'c'",
            ),
            (
                "0.1,1.2,20,0.3,20,25\n1.5,1.4,10,0.2,50,30\n",
                "declared bounds",
                "'c'",
            ),
            ("0.1,1.2,20,0.3,0,25\n", "transform 'log'", "'kv'"),
            ("0.1,99.5,20,0.9,20,25\n", "above the 100 wt%", "'mn'"),
        ];
        for (rows, what, col) in cases {
            let e = s
                .prepare(&table(rows), "s.toml", PrepareOptions::default())
                .expect_err(what)
                .to_string();
            assert!(
                e.contains(what) && e.contains(col) && e.contains("mem.csv"),
                "{e}"
            );
        }
    }

    #[test]
    fn missing_inputs_fail_unless_dropped_and_missing_targets_are_kept() {
        let s = Schema::from_toml(SCHEMA, "s.toml").expect("schema");
        let t = table("0.1,,20,0.3,20,25\n0.12,1.4,10,0.2,,30\n0.1,1.3,10,0.2,40,31\n");
        let e = s
            .prepare(&t, "s.toml", PrepareOptions::default())
            .expect_err("missing mn");
        assert!(e.to_string().contains("row 1 (line 2): 'mn'"), "{e}");
        let p = s
            .prepare(
                &t,
                "s.toml",
                PrepareOptions {
                    need_targets: true,
                    drop_incomplete_rows: true,
                },
            )
            .expect("dropped");
        assert_eq!(p.dropped_rows, vec![1]);
        assert_eq!(
            p.missing_targets,
            vec![("kv".to_string(), vec![2]), ("elong".to_string(), vec![])]
        );
        assert_eq!(p.table.n_rows(), 2);
        assert_eq!(p.table.numeric_optional("kv").expect("kv")[0], None);
    }

    #[test]
    fn schema_mistakes_are_explained() {
        let bad = [
            ("mettle_schema = 1\n[[column]]\nname='x'\nrole='input'\nunit='furlong'\n", "known units"),
            ("mettle_schema = 1\n[[column]]\nname='x'\nrole='input'\n", "needs a unit"),
            ("mettle_schema = 1\n[[column]]\nname='x'\nrole='boss'\nunit='J'\n", "role"),
            ("mettle_schema = 1\n[[column]]\nname='x'\nrole='target'\nunit='%'\ntransform='bounded'\n", "needs both min and max"),
            ("mettle_schema = 1\n[[column]]\nname='x'\nrole='input'\nunit='J'\nstands_for='Mn'\n", "is a composition"),
            ("mettle_schema = 1\n[[column]]\nname='x'\nrole='input'\nunit='wt%'\n[[derived]]\nspec='ce_iiw'\n", "needs C"),
            ("mettle_schema = 2\n[[column]]\nname='x'\nrole='input'\nunit='wt%'\n", "version 1"),
            ("mettle_schema = 1\n[[column]]\nname='x'\nrole='input'\nunit='wt%'\ncolour='red'\n", "colour"),
        ];
        for (text, what) in bad {
            let e = Schema::from_toml(text, "s.toml")
                .expect_err(what)
                .to_string();
            assert!(e.contains(what) && e.contains("s.toml"), "{what}: {e}");
        }
    }

    #[test]
    fn stored_schema_round_trips_through_json() {
        let s = Schema::from_toml(SCHEMA, "s.toml").expect("schema");
        let j = serde_json::to_string(&s).expect("json");
        let back: Schema = serde_json::from_str(&j).expect("back");
        assert_eq!(back, s);
    }

    const CODED: &str = r#"
mettle_schema = 1
[[column]]
name = "x"
role = "input"
unit = "1"
[[column]]
name = "gas"
role = "input"
kind = "levels"
levels = { 0 = "none", 1 = "argon", 2 = "carbon_dioxide" }
[[column]]
name = "y"
role = "target"
unit = "1"
"#;

    fn coded_table(gas: &[&str]) -> Table {
        let n = gas.len();
        let mut t = Table::from_optional_columns(
            Path::new("mem.csv"),
            vec![
                ("x".into(), (0..n).map(|i| Some(i as f64)).collect()),
                ("y".into(), (0..n).map(|i| Some(2.0 * i as f64)).collect()),
            ],
        )
        .expect("table");
        t.push_column(
            "gas".into(),
            crate::data::ColumnData::Text(gas.iter().map(|g| Some(g.to_string())).collect()),
        )
        .expect("gas");
        t
    }

    #[test]
    fn a_code_becomes_one_indicator_per_level() {
        let s = Schema::from_toml(CODED, "s.toml").expect("schema");
        // cells by code or by name, as the schema docs allow
        let t = coded_table(&["0", "argon", "2", "1", "carbon_dioxide"]);
        let p = s
            .prepare(&t, "s.toml", PrepareOptions::default())
            .expect("prepare");
        assert_eq!(
            p.inputs,
            vec!["x", "gas=none", "gas=argon", "gas=carbon_dioxide"]
        );
        let col = |n: &str| p.table.numeric(n).expect(n);
        assert_eq!(col("gas=none"), vec![1.0, 0.0, 0.0, 0.0, 0.0]);
        assert_eq!(col("gas=argon"), vec![0.0, 1.0, 0.0, 1.0, 0.0]);
        assert_eq!(col("gas=carbon_dioxide"), vec![0.0, 0.0, 1.0, 0.0, 1.0]);
        // every row has exactly one level
        for r in 0..5 {
            let sum: f64 = p.inputs[1..].iter().map(|n| col(n)[r]).sum();
            assert!(sum.total_cmp(&1.0).is_eq(), "row {r}");
        }
    }

    #[test]
    fn an_undeclared_level_is_refused_with_the_known_levels() {
        let s = Schema::from_toml(CODED, "s.toml").expect("schema");
        for bad in ["3", "1.5", "helium"] {
            let e = s
                .prepare(
                    &coded_table(&["0", "1", bad]),
                    "s.toml",
                    PrepareOptions::default(),
                )
                .expect_err(bad)
                .to_string();
            assert!(
                e.contains("mem.csv")
                    && e.contains("row 3")
                    && e.contains("'gas'")
                    && e.contains("0 = none, 1 = argon, 2 = carbon_dioxide"),
                "{bad}: {e}"
            );
        }
    }

    #[test]
    fn code_declaration_mistakes_are_explained() {
        let head = "mettle_schema = 1\n[[column]]\nname='g'\n";
        let bad = [
            ("role='input'\nlevels={0='a',1='b'}\n", "kind = \"levels\""),
            ("role='target'\nkind='levels'\nlevels={0='a',1='b'}\n", "for input columns"),
            ("role='input'\nkind='levels'\nlevels={0='a'}\n", "at least two levels"),
            ("role='input'\nkind='levels'\nlevels={0='a',x='b'}\n", "not an integer"),
            ("role='input'\nkind='levels'\nlevels={0='a',1='a'}\n", "used twice"),
            ("role='input'\nkind='levels'\nlevels={0='a',1='7'}\n", "is a number"),
            ("role='input'\nkind='levels'\nunit='wt%'\nlevels={0='a',1='b'}\n", "no unit"),
            ("role='input'\nkind='levels'\nmin=0\nlevels={0='a',1='b'}\n", "no min"),
            ("role='input'\nkind='levels'\nlevels={0='a',1='b'}\n[[column]]\nname='g=a'\nrole='input'\nunit='1'\n", "indicator column"),
        ];
        for (text, what) in bad {
            let e = Schema::from_toml(&format!("{head}{text}"), "s.toml")
                .expect_err(what)
                .to_string();
            assert!(e.contains(what), "{what}: {e}");
        }
        let s = Schema::from_toml(CODED, "s.toml").expect("schema");
        let j = serde_json::to_string(&s).expect("json");
        assert!(j.contains("\"kind\":\"levels\""), "{j}");
        assert_eq!(serde_json::from_str::<Schema>(&j).expect("back"), s);
    }
}
