//! Output rows: the only place that knows column names, their units and number formats.
//!
//! Renaming a column is a format change: record it in CHANGELOG.md.

pub mod csv_out;
pub mod drawing;
pub mod html;
pub mod table;

pub use csv_out::{csv_header, csv_records, format_number, write_csv, CsvFormat};
pub use table::{measure_table, write_jsonl, xlsx_bytes, Cell, RunRecord, Table, XlsxError};

use crate::analyze::Outcome;
use crate::import::LengthUnit;

/// One output row: a profile's outcome with the file it came from.
#[derive(Debug, Clone)]
pub struct Row {
    pub file: String,
    pub outcome: Outcome,
}

/// How a column's value scales with the output length unit.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Dim {
    /// Not a length (counts, angles, mass).
    None,
    /// Length to this power.
    L(i32),
}

/// Column definitions: (name stem, dimension). The header is `stem_<unit><power>`, e.g.
/// `area_mm2`; dimensionless columns keep their stem.
const NUMERIC: &[(&str, Dim)] = &[
    ("area", Dim::L(2)),
    ("perimeter", Dim::L(1)),
    ("perimeter_outer", Dim::L(1)),
    ("holes", Dim::None),
    ("cx", Dim::L(1)),
    ("cy", Dim::L(1)),
    ("xmin", Dim::L(1)),
    ("ymin", Dim::L(1)),
    ("xmax", Dim::L(1)),
    ("ymax", Dim::L(1)),
    ("ixx", Dim::L(4)),
    ("iyy", Dim::L(4)),
    ("ixy", Dim::L(4)),
    ("ip", Dim::L(4)),
    ("i1", Dim::L(4)),
    ("i2", Dim::L(4)),
    ("theta_deg", Dim::None),
    ("wx_top", Dim::L(3)),
    ("wx_bottom", Dim::L(3)),
    ("wy_left", Dim::L(3)),
    ("wy_right", Dim::L(3)),
    ("rx", Dim::L(1)),
    ("ry", Dim::L(1)),
    ("r1", Dim::L(1)),
    ("r2", Dim::L(1)),
    ("mass_kg_per_m", Dim::None),
];

/// The plastic tier (`--plastic`, or `--all`), after the columns above. Offsets of the
/// plastic neutral axes from the centroid (positive up for the axis parallel to x, to the
/// right for the one parallel to y), plastic section moduli about axes parallel to x, y and
/// the principal axes 1 (of i1) and 2 (of i2) with their neutral axes' offsets, and shape
/// factors (plastic over the smaller elastic modulus).
const PLASTIC: &[(&str, Dim)] = &[
    ("pna_x", Dim::L(1)),
    ("pna_y", Dim::L(1)),
    ("plastic_x", Dim::L(3)),
    ("plastic_y", Dim::L(3)),
    ("shape_x", Dim::None),
    ("shape_y", Dim::None),
    ("pna_1", Dim::L(1)),
    ("pna_2", Dim::L(1)),
    ("plastic_1", Dim::L(3)),
    ("plastic_2", Dim::L(3)),
    ("shape_1", Dim::None),
    ("shape_2", Dim::None),
];

/// The extruder's tier (`--extrusion`, or `--all`), after the plastic one: the
/// circumscribing circle (diameter and centre), the thinnest wall with its two ends, the
/// thickest section (diameter of the largest inscribed circle), the number of hollows, the
/// inner perimeter, the surface per metre of length (outer, inner, whole; m²/m whatever the
/// length unit, so `Dim::None`), and the centroid of the outline taken as a line.
const EXTRUSION: &[(&str, Dim)] = &[
    ("circumscribed_diameter", Dim::L(1)),
    ("circumscribed_cx", Dim::L(1)),
    ("circumscribed_cy", Dim::L(1)),
    ("thinnest_wall", Dim::L(1)),
    ("thinnest_wall_x1", Dim::L(1)),
    ("thinnest_wall_y1", Dim::L(1)),
    ("thinnest_wall_x2", Dim::L(1)),
    ("thinnest_wall_y2", Dim::L(1)),
    ("thickest_section", Dim::L(1)),
    ("hollows", Dim::None),
    ("perimeter_inner", Dim::L(1)),
    ("surface_outer_m2_per_m", Dim::None),
    ("surface_inner_m2_per_m", Dim::None),
    ("surface_m2_per_m", Dim::None),
    ("outline_cx", Dim::L(1)),
    ("outline_cy", Dim::L(1)),
];

/// The torsion tier (`--torsion`, or `--all`), after the extruder's: the St Venant torsion
/// constant, the shear centre (Trefftz) in drawing coordinates, the warping constant about
/// the shear centre, and the solver's estimate of its relative error
/// ([`crate::fem::torsion`]).
const TORSION: &[(&str, Dim)] = &[
    ("j", Dim::L(4)),
    ("xs", Dim::L(1)),
    ("ys", Dim::L(1)),
    ("iw", Dim::L(6)),
    ("torsion_accuracy", Dim::None),
];

/// Which optional tiers of columns a report carries; each tier comes after the core
/// columns and those of the tiers before it, so the column order never changes.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Tiers {
    pub plastic: bool,
    pub extrusion: bool,
    pub torsion: bool,
}

impl Tiers {
    /// Every tier, present and future (`--all`).
    pub const ALL: Tiers = Tiers {
        plastic: true,
        extrusion: true,
        torsion: true,
    };

    fn columns(self) -> impl Iterator<Item = &'static (&'static str, Dim)> {
        let plastic: &[(&str, Dim)] = if self.plastic { PLASTIC } else { &[] };
        let extrusion: &[(&str, Dim)] = if self.extrusion { EXTRUSION } else { &[] };
        let torsion: &[(&str, Dim)] = if self.torsion { TORSION } else { &[] };
        NUMERIC
            .iter()
            .chain(plastic)
            .chain(extrusion)
            .chain(torsion)
    }

    /// How many numeric columns a row has.
    pub fn n_numeric(self) -> usize {
        self.columns().count()
    }
}

/// An optional tier of columns.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Tier {
    Plastic,
    Extrusion,
    Torsion,
}

/// A numeric column named by a header such as `ixx_cm4`: its place among all numeric
/// columns with every tier on ([`Tiers::ALL`], the order of [`numeric_values`]), its stem
/// (`ixx`), the length power its value carries (0 for counts, angles, kg/m, m²/m), the unit
/// the name states (millimetres for a column without a length), and its tier, if optional.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NamedColumn {
    pub index: usize,
    pub stem: &'static str,
    pub power: i32,
    pub unit: LengthUnit,
    pub tier: Option<Tier>,
}

impl NamedColumn {
    /// The column's name in `unit` (for columns with a length; others keep their name).
    pub fn name_in(&self, unit: LengthUnit) -> String {
        match self.power {
            0 => self.stem.to_string(),
            1 => format!("{}_{}", self.stem, unit.name),
            p => format!("{}_{}{p}", self.stem, unit.name),
        }
    }
    /// The column's own name, in the unit it was named with.
    pub fn name(&self) -> String {
        self.name_in(self.unit)
    }
}

/// Every numeric column with its tier, in the order of [`numeric_values`] with every tier on.
fn all_columns() -> impl Iterator<Item = (&'static (&'static str, Dim), Option<Tier>)> {
    NUMERIC
        .iter()
        .map(|c| (c, None))
        .chain(PLASTIC.iter().map(|c| (c, Some(Tier::Plastic))))
        .chain(EXTRUSION.iter().map(|c| (c, Some(Tier::Extrusion))))
        .chain(TORSION.iter().map(|c| (c, Some(Tier::Torsion))))
}

/// Every numeric column in millimetres, in the order of [`numeric_values`] with every tier on.
pub fn all_named_columns() -> impl Iterator<Item = NamedColumn> {
    all_columns()
        .enumerate()
        .map(|(index, ((stem, dim), tier))| NamedColumn {
            index,
            stem,
            power: match dim {
                Dim::None => 0,
                Dim::L(k) => *k,
            },
            unit: LengthUnit::MM,
            tier,
        })
}

/// The numeric column a header names (`area_mm2`, `IXX_CM4`, `j_in4`, `mass_kg_per_m`; case
/// and surrounding spaces ignored), in any of the output units mm, cm, m and in.
pub fn parse_column(name: &str) -> Option<NamedColumn> {
    let name = name.trim().to_ascii_lowercase();
    for (index, ((stem, dim), tier)) in all_columns().enumerate() {
        let (stem, tier) = (*stem, tier);
        match dim {
            Dim::None => {
                if name == stem {
                    return Some(NamedColumn {
                        index,
                        stem,
                        power: 0,
                        unit: LengthUnit::MM,
                        tier,
                    });
                }
            }
            Dim::L(power) => {
                for unit in [
                    LengthUnit::MM,
                    LengthUnit::CM,
                    LengthUnit::M,
                    LengthUnit::INCH,
                ] {
                    let c = NamedColumn {
                        index,
                        stem,
                        power: *power,
                        unit,
                        tier,
                    };
                    if c.name() == name {
                        return Some(c);
                    }
                }
            }
        }
    }
    None
}

/// Leading text columns.
const TEXT: &[&str] = &[
    "file",
    "profile",
    "status",
    "message",
    "layer",
    "drawing_units",
];

/// The header for output length unit `unit`.
pub fn header(unit: LengthUnit, tiers: Tiers) -> Vec<String> {
    let mut h: Vec<String> = TEXT.iter().map(|s| s.to_string()).collect();
    for (stem, dim) in tiers.columns() {
        h.push(match dim {
            Dim::None => stem.to_string(),
            Dim::L(1) => format!("{stem}_{}", unit.name),
            Dim::L(p) => format!("{stem}_{}{p}", unit.name),
        });
    }
    h
}

/// Numeric values of a row in the column order of the header, converted from millimetres
/// to `unit`; `None` for an error row. Values of a tier that were not computed are NaN
/// (empty fields).
pub fn numeric_values(
    o: &Outcome,
    unit: LengthUnit,
    density_kg_m3: f64,
    tiers: Tiers,
) -> Option<Vec<f64>> {
    let p = o.result.as_ref().ok()?;
    let mut raw = vec![
        p.area,
        p.perimeter,
        p.perimeter_outer,
        p.n_holes as f64,
        p.centroid.x,
        p.centroid.y,
        p.bbox.min.x,
        p.bbox.min.y,
        p.bbox.max.x,
        p.bbox.max.y,
        p.ixx,
        p.iyy,
        p.ixy,
        p.ip,
        p.i1,
        p.i2,
        p.theta_deg,
        p.wx_top,
        p.wx_bottom,
        p.wy_left,
        p.wy_right,
        p.rx,
        p.ry,
        p.r1,
        p.r2,
        // kg/m = mm² · 1e-6 m²/mm² · kg/m³
        p.area * 1e-6 * density_kg_m3,
    ];
    if tiers.plastic {
        match &p.plastic {
            Some(q) => raw.extend([
                q.pna_x,
                q.pna_y,
                q.plastic_x,
                q.plastic_y,
                q.shape_x,
                q.shape_y,
                q.pna_1,
                q.pna_2,
                q.plastic_1,
                q.plastic_2,
                q.shape_1,
                q.shape_2,
            ]),
            None => raw.extend([f64::NAN; PLASTIC.len()]),
        }
    }
    if tiers.extrusion {
        match &p.extrusion {
            Some(x) => raw.extend([
                x.circumscribed_diameter,
                x.circumscribed_center.x,
                x.circumscribed_center.y,
                x.thinnest_wall,
                x.thinnest_wall_from.x,
                x.thinnest_wall_from.y,
                x.thinnest_wall_to.x,
                x.thinnest_wall_to.y,
                x.thickest_section,
                x.hollows as f64,
                x.perimeter_inner,
                x.surface_outer(),
                x.surface_inner(),
                x.surface(),
                x.outline_centroid.x,
                x.outline_centroid.y,
            ]),
            None => raw.extend([f64::NAN; EXTRUSION.len()]),
        }
    }
    if tiers.torsion {
        match &p.torsion {
            Some(t) => raw.extend([t.j, t.shear_centre.x, t.shear_centre.y, t.iw, t.accuracy]),
            None => raw.extend([f64::NAN; TORSION.len()]),
        }
    }
    Some(
        raw.iter()
            .zip(tiers.columns())
            .map(|(v, (_, dim))| match dim {
                Dim::None => *v,
                Dim::L(k) => *v / unit.mm.powi(*k),
            })
            .collect(),
    )
}
