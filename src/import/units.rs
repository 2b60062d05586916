//! Length units of drawings and of the output.

use std::fmt;

/// A unit of length with its size in millimetres.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LengthUnit {
    /// Short name used in column suffixes and messages, e.g. `mm`, `in`.
    pub name: &'static str,
    pub mm: f64,
}

impl LengthUnit {
    pub const MM: LengthUnit = LengthUnit {
        name: "mm",
        mm: 1.0,
    };
    pub const CM: LengthUnit = LengthUnit {
        name: "cm",
        mm: 10.0,
    };
    pub const M: LengthUnit = LengthUnit {
        name: "m",
        mm: 1000.0,
    };
    pub const INCH: LengthUnit = LengthUnit {
        name: "in",
        mm: 25.4,
    };

    /// The unit of a DXF `$INSUNITS` code (DXF reference, HEADER section; `0` is unitless and
    /// gives `None`, as does an unknown code).
    pub fn from_insunits(code: i64) -> Option<LengthUnit> {
        let (name, mm) = match code {
            1 => ("in", 25.4),
            2 => ("ft", 304.8),
            3 => ("mi", 1_609_344.0),
            4 => ("mm", 1.0),
            5 => ("cm", 10.0),
            6 => ("m", 1000.0),
            7 => ("km", 1_000_000.0),
            8 => ("uin", 25.4e-6),
            9 => ("mil", 25.4e-3),
            10 => ("yd", 914.4),
            11 => ("angstrom", 1e-7),
            12 => ("nm", 1e-6),
            13 => ("um", 1e-3),
            14 => ("dm", 100.0),
            15 => ("dam", 10_000.0),
            16 => ("hm", 100_000.0),
            17 => ("Gm", 1e12),
            18 => ("au", 1.495_978_707e14),
            19 => ("ly", 9.460_730_472_580_8e18),
            20 => ("pc", 3.085_677_581_491_367e19),
            21 => ("us_ft", 1200.0 / 3937.0 * 1000.0),
            22 => ("us_in", 1200.0 / 3937.0 * 1000.0 / 12.0),
            23 => ("us_yd", 1200.0 / 3937.0 * 1000.0 * 3.0),
            24 => ("us_mi", 1200.0 / 3937.0 * 1000.0 * 5280.0),
            _ => return None,
        };
        Some(LengthUnit { name, mm })
    }

    /// Parse a unit name as given on the command line.
    pub fn parse(name: &str) -> Option<LengthUnit> {
        match name.to_ascii_lowercase().as_str() {
            "mm" => Some(Self::MM),
            "cm" => Some(Self::CM),
            "m" => Some(Self::M),
            "in" | "inch" => Some(Self::INCH),
            "ft" => Self::from_insunits(2),
            "um" => Self::from_insunits(13),
            "dm" => Self::from_insunits(14),
            _ => None,
        }
    }
}

impl fmt::Display for LengthUnit {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name)
    }
}

/// The length unit of a drawing, and how it was decided.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct SourceUnits {
    /// The `$INSUNITS` code found in the file, if any.
    pub code: Option<i64>,
    /// The unit the file declares, `None` when unitless or unknown.
    pub declared: Option<LengthUnit>,
}
