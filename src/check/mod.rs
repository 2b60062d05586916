//! Checking a supplier catalog against its drawings: every stated value compared with what
//! the drawing gives, within a tolerance.
//!
//! A catalog ([`catalog`]) has a `drawing` column (the drawing's path, relative to the
//! catalog), optionally a `profile` column (the profile's number as `measure` numbers them,
//! or a layer name), and value columns named as `measure` names them (`area_mm2`,
//! `ixx_cm4`, `j_in4`, `mass_kg_per_m`…), their unit taken from the name. A [`Mapping`]
//! renames other headers to these and sets tolerances.
//!
//! A stated value s passes against the measured m when |m − s| ≤ max(rel·|s|, floor), with
//! `rel` the property's relative tolerance (default 1 %, common practice for catalog values
//! rounded to three or four digits) and `floor` an absolute allowance for values near zero
//! (the product of area of a symmetric section): `floor_rel` (default 0.1 %) of the
//! section's own magnitude of that dimension, A·r^(k−2) for a length to the power k with
//! r = √(ip/A) the polar radius of gyration (so A for areas, ip for second moments).
//!
//! This module does no I/O.

pub mod catalog;

use std::collections::HashMap;

use crate::analyze::Outcome;
use crate::import::LengthUnit;
use crate::report::{numeric_values, parse_column, NamedColumn, Tier, Tiers};
use crate::section::SectionProps;
pub use catalog::{read_catalog, CatalogCell, CatalogRow, CatalogTable, TextOptions};

/// Relative tolerance when none is given (1 %).
pub const DEFAULT_TOLERANCE: f64 = 0.01;
/// Absolute floor when none is given, as a fraction of the section's magnitude (0.1 %).
pub const DEFAULT_FLOOR: f64 = 0.001;

/// Tolerances: a default, per-property ones (by column stem, e.g. `ixx`), and the floor.
#[derive(Debug, Clone, PartialEq)]
pub struct Tolerances {
    pub default: f64,
    pub per_property: HashMap<String, f64>,
    pub floor: f64,
}

impl Default for Tolerances {
    fn default() -> Self {
        Tolerances {
            default: DEFAULT_TOLERANCE,
            per_property: HashMap::new(),
            floor: DEFAULT_FLOOR,
        }
    }
}

impl Tolerances {
    /// The relative tolerance of a column.
    pub fn of(&self, column: &NamedColumn) -> f64 {
        self.per_property
            .get(column.stem)
            .copied()
            .unwrap_or(self.default)
    }
}

/// The stem of a property named for a tolerance: a column's name without its unit (`ixx`,
/// `area`, `j`; `mass` for `mass_kg_per_m`), any case.
pub fn property_stem(name: &str) -> Option<&'static str> {
    let name = name.trim().to_ascii_lowercase();
    let name = if name == "mass" {
        "mass_kg_per_m".to_string()
    } else {
        name
    };
    crate::report::all_named_columns()
        .map(|c| c.stem)
        .find(|s| *s == name)
}

/// A fraction written `1%`, `0.5 %` or `0.01`.
pub fn parse_fraction(text: &str) -> Result<f64, String> {
    let t = text.trim();
    let (num, scale) = match t.strip_suffix('%') {
        Some(n) => (n.trim(), 0.01),
        None => (t, 1.0),
    };
    match num.parse::<f64>() {
        Ok(v) if v.is_finite() && v >= 0.0 => Ok(v * scale),
        _ => Err(format!(
            "expected a fraction such as 1% or 0.01, found {text:?}"
        )),
    }
}

/// How a catalog's headers map onto `measure`'s names, and its tolerances: read from a TOML
/// file such as
///
/// ```toml
/// [columns]            # their header = our name (which carries the unit)
/// "Drawing file" = "drawing"
/// "Part" = "profile"
/// "Ix [cm4]" = "ixx_cm4"
///
/// [tolerances]         # relative; per property by stem; floor of the module doc
/// default = "1%"
/// ixx = "0.5%"
/// floor = "0.1%"
/// ```
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Mapping {
    /// Their header (lower case, trimmed) → our name.
    pub columns: HashMap<String, String>,
    pub tolerances: Tolerances,
}

impl Mapping {
    /// Parse a mapping file's text.
    pub fn parse(text: &str) -> Result<Mapping, String> {
        let table: toml::Table = text
            .parse()
            .map_err(|e: toml::de::Error| format!("mapping file: {}", e.message()))?;
        let mut m = Mapping::default();
        for (key, value) in &table {
            match (key.as_str(), value) {
                ("columns", toml::Value::Table(t)) => {
                    for (theirs, ours) in t {
                        let ours = ours.as_str().ok_or_else(|| {
                            format!("mapping file: [columns] {theirs:?} must map to a text name")
                        })?;
                        let ours = ours.trim().to_string();
                        let known = matches!(ours.as_str(), "drawing" | "profile" | "label")
                            || parse_column(&ours).is_some();
                        if !known {
                            return Err(format!(
                                "mapping file: [columns] {theirs:?} maps to {ours:?}, which is not \
                                 a column of measure (e.g. area_mm2, ixx_cm4, mass_kg_per_m) nor \
                                 drawing or profile"
                            ));
                        }
                        m.columns.insert(theirs.trim().to_lowercase(), ours);
                    }
                }
                ("tolerances", toml::Value::Table(t)) => {
                    for (name, value) in t {
                        let v = match value {
                            toml::Value::String(s) => parse_fraction(s),
                            toml::Value::Float(f) => parse_fraction(&f.to_string()),
                            toml::Value::Integer(i) => parse_fraction(&i.to_string()),
                            _ => Err(format!("expected a fraction such as \"1%\", found {value:?}")),
                        }
                        .map_err(|e| format!("mapping file: [tolerances] {name}: {e}"))?;
                        match name.as_str() {
                            "default" => m.tolerances.default = v,
                            "floor" => m.tolerances.floor = v,
                            name => {
                                let stem = property_stem(name).ok_or_else(|| {
                                    format!(
                                        "mapping file: [tolerances] {name:?} is not a property \
                                         (a column's name without its unit, e.g. ixx, area, j, mass)"
                                    )
                                })?;
                                m.tolerances.per_property.insert(stem.to_string(), v);
                            }
                        }
                    }
                }
                (other, _) => {
                    return Err(format!(
                        "mapping file: unknown table or key {other:?} (expected [columns] and [tolerances])"
                    ))
                }
            }
        }
        Ok(m)
    }
}

/// A value column of the catalog: where it is and which column of `measure` it states.
#[derive(Debug, Clone, PartialEq)]
pub struct ValueColumn {
    pub position: usize,
    /// The catalog's own header.
    pub header: String,
    pub column: NamedColumn,
}

/// What a catalog asks: its drawing and profile columns and its value columns, plus the
/// headers it has that name nothing sectio computes (reported, not compared).
#[derive(Debug, Clone, PartialEq)]
pub struct Plan {
    pub drawing: usize,
    /// A column naming the part (`label`, `part`, `designation` or `name`), carried into the
    /// results.
    pub label: Option<usize>,
    pub profile: Option<usize>,
    pub values: Vec<ValueColumn>,
    pub ignored: Vec<String>,
}

impl Plan {
    /// Which optional tiers the value columns need.
    pub fn tiers(&self) -> Tiers {
        let has = |t: Tier| self.values.iter().any(|v| v.column.tier == Some(t));
        Tiers {
            plastic: has(Tier::Plastic),
            extrusion: has(Tier::Extrusion),
            torsion: has(Tier::Torsion),
        }
    }
}

/// Read the header: `Err` when the catalog cannot be used (no drawing column, no value
/// column, a column named twice).
pub fn plan(table: &CatalogTable, mapping: &Mapping) -> Result<Plan, String> {
    let (mut drawing, mut profile, mut label) = (None, None, None);
    let mut values: Vec<ValueColumn> = Vec::new();
    let mut ignored = Vec::new();
    for (position, header) in table.header.iter().enumerate() {
        let key = header.trim().to_lowercase();
        let ours = mapping.columns.get(&key).cloned().unwrap_or(key.clone());
        match ours.as_str() {
            "drawing" => {
                if drawing.replace(position).is_some() {
                    return Err("two columns name the drawing".into());
                }
            }
            "profile" => {
                if profile.replace(position).is_some() {
                    return Err("two columns name the profile".into());
                }
            }
            "label" | "part" | "designation" | "name" if label.is_none() => {
                label = Some(position);
            }
            _ => match parse_column(&ours) {
                Some(column) => {
                    if let Some(v) = values.iter().find(|v| v.column.index == column.index) {
                        return Err(format!(
                            "columns {:?} and {header:?} state the same property",
                            v.header
                        ));
                    }
                    values.push(ValueColumn {
                        position,
                        header: header.clone(),
                        column,
                    });
                }
                None if !header.trim().is_empty() => ignored.push(header.clone()),
                None => {}
            },
        }
    }
    let drawing = drawing.ok_or_else(|| {
        format!(
            "no drawing column: the catalog's header ({}) needs a column named drawing \
             (or one mapped to it with --map)",
            table.header.join(", ")
        )
    })?;
    if values.is_empty() {
        return Err(format!(
            "no value to compare: no header names a column of measure (e.g. area_mm2, \
             ixx_cm4, mass_kg_per_m) or is mapped to one; headers: {}",
            table.header.join(", ")
        ));
    }
    Ok(Plan {
        drawing,
        label,
        profile,
        values,
        ignored,
    })
}

/// Whether a catalog row describes a profile: it names a drawing or states a number. Rows
/// that do neither (a units row under the header, a section heading, a note) are not
/// profiles and are passed over.
pub fn is_profile_row(row: &CatalogRow, plan: &Plan) -> bool {
    let cell = |k: usize| row.cells.get(k).cloned().unwrap_or(CatalogCell::Empty);
    !cell(plan.drawing).text().trim().is_empty()
        || plan
            .values
            .iter()
            .any(|v| matches!(cell(v.position), CatalogCell::Number(_)))
}

/// The result of comparing one stated value.
#[derive(Debug, Clone, PartialEq)]
pub struct Comparison {
    /// The catalog's line (or sheet row) of the profile.
    pub line: usize,
    /// The catalog's name of the part, if it has a label column.
    pub label: String,
    pub drawing: String,
    /// The profile as the catalog names it (empty when the drawing holds one).
    pub profile: String,
    /// The number (as `measure` numbers them) of the drawing's profile the row was matched
    /// to, when one was.
    pub measured_profile: Option<usize>,
    /// `measure`'s name of the property in the catalog's unit, e.g. `ixx_cm4`.
    pub property: String,
    pub stated: Option<f64>,
    pub measured: Option<f64>,
    /// The largest difference allowed.
    pub allowed: Option<f64>,
    pub pass: bool,
    /// Why it failed, and for a value outside its tolerance a likely cause when one fits
    /// (swapped properties, a unit slip).
    pub reason: String,
}

impl Comparison {
    pub fn difference(&self) -> Option<f64> {
        Some(self.measured? - self.stated?)
    }
    /// (measured − stated) / |stated|; `None` for a stated zero.
    pub fn relative_difference(&self) -> Option<f64> {
        let s = self.stated?;
        (s != 0.0).then(|| self.difference().map(|d| d / s.abs()))?
    }
    /// The relative difference for reading beside the difference, as ` (+1.23%)`; empty
    /// when there is none (summaries and the report).
    pub fn relative_note(&self) -> String {
        self.relative_difference()
            .map_or_else(String::new, |r| format!(" ({:+.2}%)", r * 100.0))
    }
}

/// Which of a drawing's outcomes a catalog row means: by number, by layer, or the only one.
fn select<'a>(outcomes: &'a [Outcome], profile: &CatalogCell) -> Result<&'a Outcome, String> {
    let measured: Vec<&Outcome> = outcomes.iter().filter(|o| o.profile > 0).collect();
    let file_error = outcomes
        .iter()
        .find(|o| o.profile == 0)
        .and_then(|o| o.result.as_ref().err());
    match profile {
        CatalogCell::Empty => match (measured.len(), file_error) {
            (_, Some(e)) if measured.is_empty() => Err(format!("drawing not measured: {e}")),
            (1, _) => Ok(measured[0]),
            (0, _) => Err("the drawing holds no profile".into()),
            (n, _) => Err(format!(
                "the drawing holds {n} profiles: say which in a profile column (its number, \
                 as measure numbers them, or its layer)"
            )),
        },
        CatalogCell::Number(v) if v.fract() == 0.0 && *v >= 1.0 => {
            let n = *v as usize;
            measured
                .iter()
                .find(|o| o.profile == n)
                .copied()
                .ok_or_else(|| {
                    format!(
                        "profile {n} not found: the drawing holds {} profile{}",
                        measured.len(),
                        if measured.len() == 1 { "" } else { "s" }
                    )
                })
        }
        other => {
            let name = other.text();
            if let Ok(n) = name.trim().parse::<usize>() {
                return select(outcomes, &CatalogCell::Number(n as f64));
            }
            let on_layer: Vec<&Outcome> = measured
                .iter()
                .filter(|o| o.layer.eq_ignore_ascii_case(name.trim()))
                .copied()
                .collect();
            match on_layer.len() {
                1 => Ok(on_layer[0]),
                0 => Err(format!("no profile on layer {name:?}")),
                n => Err(format!(
                    "{n} profiles on layer {name:?}: give its number instead"
                )),
            }
        }
    }
}

/// The section's magnitude for a length to the power k: A·r^(k−2), r = √(ip/A) (module doc).
fn magnitude(p: &SectionProps, power: i32) -> f64 {
    let r = (p.ip / p.area).abs().sqrt();
    p.area.abs() * r.powi(power - 2)
}

/// A likely cause of a failed value: another property of the same dimension that it matches
/// (swapped columns), or a factor that is a power of ten or of 25.4 (a unit slip).
fn likely_cause(
    stated: f64,
    measured: f64,
    column: &NamedColumn,
    values_mm: &[f64],
    rel: f64,
    plan: &Plan,
) -> Option<String> {
    let close = |a: f64, b: f64| (a - b).abs() <= rel * b.abs();
    // Another column of the same length power matching the stated value.
    for (index, (value, other)) in values_mm
        .iter()
        .zip(crate::report::all_named_columns())
        .enumerate()
    {
        if index == column.index || other.power != column.power || other.stem == "ip" {
            continue;
        }
        let v = value / column.unit.mm.powi(column.power);
        if v.is_finite() && v != 0.0 && close(stated, v) {
            let named = plan
                .values
                .iter()
                .find(|c| c.column.index == index)
                .map_or_else(|| other.name_in(column.unit), |c| c.header.clone());
            return Some(format!("matches {named} (swapped?)"));
        }
    }
    if measured == 0.0 || stated == 0.0 {
        return None;
    }
    let ratio = stated / measured;
    let mut factors: Vec<(f64, String)> = Vec::new();
    for k in 1..=12 {
        let f = 10f64.powi(k);
        factors.push((f, format!("10^{k}")));
        factors.push((1.0 / f, format!("10^-{k}")));
    }
    for k in 1..=6 {
        let f = 25.4f64.powi(k);
        let name = if k == 1 {
            "25.4".to_string()
        } else {
            format!("25.4^{k}")
        };
        factors.push((f, name.clone()));
        factors.push((1.0 / f, format!("1/{name}")));
    }
    if let Some((_, name)) = factors.into_iter().find(|(f, _)| close(ratio, *f)) {
        return Some(format!("{name} times the measured value (a unit slip?)"));
    }
    transposed_digits(stated, measured).then(|| "two digits transposed?".to_string())
}

/// Whether `stated`, written with its own significant digits, is `measured` rounded to as
/// many digits with two neighbouring digits swapped (a typing slip: 14.37 for 13.47).
fn transposed_digits(stated: f64, measured: f64) -> bool {
    let digits = |s: &str| -> String { s.chars().filter(|c| c.is_ascii_digit()).collect() };
    let written = format!("{:e}", stated.abs()); // shortest form, e.g. 1.437e1
    let (mantissa, exp) = written.split_once('e').unwrap_or((&written, "0"));
    let n = digits(mantissa).len();
    if n < 2 {
        return false;
    }
    let rounded = format!("{:.*e}", n - 1, measured.abs());
    let (m_mantissa, m_exp) = rounded.split_once('e').unwrap_or((&rounded, "0"));
    let (a, b) = (digits(mantissa), digits(m_mantissa));
    if exp != m_exp || a.len() != b.len() || stated.signum() != measured.signum() {
        return false;
    }
    let diff: Vec<usize> = (0..a.len())
        .filter(|&k| a.as_bytes()[k] != b.as_bytes()[k])
        .collect();
    diff.len() == 2
        && diff[1] == diff[0] + 1
        && a.as_bytes()[diff[0]] == b.as_bytes()[diff[1]]
        && a.as_bytes()[diff[1]] == b.as_bytes()[diff[0]]
}

/// Compare every stated value of every catalog row. `measured(drawing)` gives the outcomes
/// of a drawing named in the catalog (its path as written there), or why it could not be
/// read.
pub fn compare(
    table: &CatalogTable,
    plan: &Plan,
    tolerances: &Tolerances,
    density_kg_m3: f64,
    measured: &dyn Fn(&str) -> Result<Vec<Outcome>, String>,
) -> Vec<Comparison> {
    let mut out = Vec::new();
    for row in table.rows.iter().filter(|r| is_profile_row(r, plan)) {
        let cell = |k: usize| row.cells.get(k).cloned().unwrap_or(CatalogCell::Empty);
        let drawing = cell(plan.drawing).text();
        let profile_cell = plan.profile.map_or(CatalogCell::Empty, cell);
        let profile = profile_cell.text();
        // The profile the row means, or why there is none.
        let picked: Result<Outcome, String> = if drawing.trim().is_empty() {
            Err("no drawing named".into())
        } else {
            measured(&drawing).and_then(|outcomes| select(&outcomes, &profile_cell).cloned())
        };
        let base = Comparison {
            line: row.line,
            label: plan.label.map_or_else(String::new, |k| cell(k).text()),
            drawing: drawing.clone(),
            profile: profile.clone(),
            measured_profile: picked.as_ref().ok().map(|o| o.profile),
            property: String::new(),
            stated: None,
            measured: None,
            allowed: None,
            pass: false,
            reason: String::new(),
        };
        // The profile's properties, or why there are none.
        let selected: Result<SectionProps, String> =
            picked.and_then(|o| o.result.map_err(|e| format!("profile not measured: {e}")));
        for v in &plan.values {
            let mut c = Comparison {
                property: v.column.name(),
                ..base.clone()
            };
            let stated = match cell(v.position) {
                CatalogCell::Empty => continue, // nothing stated, nothing to compare
                CatalogCell::Number(s) => s,
                CatalogCell::Text(t) => {
                    c.reason = format!("stated value {t:?} is not a number");
                    out.push(c);
                    continue;
                }
            };
            c.stated = Some(stated);
            let props = match &selected {
                Ok(p) => p,
                Err(e) => {
                    c.reason = e.clone();
                    out.push(c);
                    continue;
                }
            };
            let outcome = Outcome {
                profile: 1,
                layer: String::new(),
                drawing_units: String::new(),
                result: Ok(*props),
                message: String::new(),
            };
            let values_mm = numeric_values(&outcome, LengthUnit::MM, density_kg_m3, Tiers::ALL)
                .unwrap_or_default();
            let m = values_mm.get(v.column.index).copied().unwrap_or(f64::NAN)
                / v.column.unit.mm.powi(v.column.power);
            if !m.is_finite() {
                c.reason = "not computed for this profile (see measure's message)".into();
                out.push(c);
                continue;
            }
            let rel = tolerances.of(&v.column);
            let floor = tolerances.floor * magnitude(props, v.column.power)
                / v.column.unit.mm.powi(v.column.power);
            // Dimensionless columns (angles, counts, shape factors) have no magnitude floor.
            let floor = if v.column.power == 0 { 0.0 } else { floor };
            let allowed = (rel * stated.abs()).max(floor);
            c.measured = Some(m);
            c.allowed = Some(allowed);
            c.pass = (m - stated).abs() <= allowed;
            if !c.pass {
                c.reason = match likely_cause(stated, m, &v.column, &values_mm, rel, plan) {
                    Some(cause) => format!("outside the tolerance; {cause}"),
                    None => "outside the tolerance".into(),
                };
            }
            out.push(c);
        }
    }
    out
}

/// Totals of a check.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Summary {
    /// Catalog rows (profiles).
    pub profiles: usize,
    /// Values compared (stated values, including those that could not be measured).
    pub values: usize,
    pub passed: usize,
    pub failed: usize,
    /// Catalog rows whose drawing could not be read.
    pub missing_drawings: usize,
}

/// The totals of `results` for a catalog of `rows` rows; `missing` counts the rows whose
/// drawing could not be read.
pub fn summarize(rows: usize, results: &[Comparison], missing: usize) -> Summary {
    let passed = results.iter().filter(|c| c.pass).count();
    Summary {
        profiles: rows,
        values: results.len(),
        passed,
        failed: results.len() - passed,
        missing_drawings: missing,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn transposed_digits_are_recognised() {
        assert!(transposed_digits(14.37, 13.4704922475));
        assert!(transposed_digits(0.2136, 0.21634));
        assert!(!transposed_digits(13.47, 13.4704922475));
        assert!(!transposed_digits(14.73, 13.4704922475));
        assert!(!transposed_digits(134.7, 13.4704922475));
        assert!(!transposed_digits(-14.37, 13.47));
    }

    #[test]
    fn fractions() {
        assert_eq!(parse_fraction("1%"), Ok(0.01));
        assert_eq!(parse_fraction(" 0.5 % "), Ok(0.005));
        assert_eq!(parse_fraction("0.02"), Ok(0.02));
        assert!(parse_fraction("-1%").is_err());
        assert!(parse_fraction("lots").is_err());
    }

    #[test]
    fn mapping_files() {
        let m = Mapping::parse(
            r#"
            [columns]
            "Drawing file" = "drawing"
            "Ix [cm4]" = "ixx_cm4"
            [tolerances]
            default = "2%"
            ixx = 0.005
            floor = "0.01%"
            "#,
        )
        .expect("parsed");
        assert_eq!(m.columns["drawing file"], "drawing");
        assert_eq!(m.columns["ix [cm4]"], "ixx_cm4");
        assert_eq!(m.tolerances.default, 0.02);
        assert_eq!(m.tolerances.per_property["ixx"], 0.005);
        assert!((m.tolerances.floor - 1e-4).abs() < 1e-18);
        assert!(Mapping::parse("[tolerances]\nixxx = \"1%\"").is_err());
        let m = Mapping::parse("[tolerances]\nMass = \"1%\"").expect("mass alias");
        assert_eq!(m.tolerances.per_property["mass_kg_per_m"], 0.01);
        assert!(Mapping::parse("[columns]\n\"A\" = \"areaa_mm2\"").is_err());
        assert!(Mapping::parse("[colums]\n").is_err());
        assert!(Mapping::parse("not toml =").is_err());
    }

    #[test]
    fn plans() {
        let table = CatalogTable {
            header: vec![
                "Drawing".into(),
                "Description".into(),
                "area_cm2".into(),
                "J_MM4".into(),
            ],
            rows: vec![],
            dialect: String::new(),
        };
        let p = plan(&table, &Mapping::default()).expect("usable");
        assert_eq!(p.drawing, 0);
        assert_eq!(p.values.len(), 2);
        assert_eq!(p.values[0].column.unit, LengthUnit::CM);
        assert_eq!(p.ignored, ["Description"]);
        assert_eq!(p.label, None);
        assert!(p.tiers().torsion && !p.tiers().plastic);
        let no_drawing = CatalogTable {
            header: vec!["area_mm2".into()],
            ..table.clone()
        };
        assert!(plan(&no_drawing, &Mapping::default()).is_err());
        let twice = CatalogTable {
            header: vec!["drawing".into(), "area_mm2".into(), "area_cm2".into()],
            ..table
        };
        assert!(plan(&twice, &Mapping::default()).is_err());
    }
}
