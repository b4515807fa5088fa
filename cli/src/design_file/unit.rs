//! The length unit of a design file: its name as written, and metres per unit.
//!
//! Invariants: the unit scales lengths only (an inch is 25.4 mm exactly, a mil a thousandth
//! of it); `µm` is read as `um`; the name written back
//! (axis labels, messages) is the plain ASCII one.

/// The length unit of a design file.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum LengthUnit {
    /// Metres (the default).
    #[default]
    M,
    /// Centimetres.
    Cm,
    /// Millimetres.
    Mm,
    /// Micrometres.
    Um,
    /// Mils (thousandths of an inch, 25.4 um exactly).
    Mil,
    /// Inches (25.4 mm exactly).
    In,
}

impl LengthUnit {
    /// Metres per unit.
    pub fn scale(self) -> f64 {
        match self {
            LengthUnit::M => 1.0,
            LengthUnit::Cm => 1e-2,
            LengthUnit::Mm => 1e-3,
            LengthUnit::Um => 1e-6,
            LengthUnit::Mil => 25.4e-6,
            LengthUnit::In => 25.4e-3,
        }
    }

    /// The name used in design files and axis labels: `m`, `cm`, `mm`, `um`, `mil`, `in`.
    pub fn name(self) -> &'static str {
        match self {
            LengthUnit::M => "m",
            LengthUnit::Cm => "cm",
            LengthUnit::Mm => "mm",
            LengthUnit::Um => "um",
            LengthUnit::Mil => "mil",
            LengthUnit::In => "in",
        }
    }

    /// The unit of a design file's `unit` value (`µm` is accepted for `um`).
    pub fn parse(s: &str) -> Option<LengthUnit> {
        match s {
            "m" => Some(LengthUnit::M),
            "cm" => Some(LengthUnit::Cm),
            "mm" => Some(LengthUnit::Mm),
            "um" | "µm" => Some(LengthUnit::Um),
            "mil" => Some(LengthUnit::Mil),
            "in" => Some(LengthUnit::In),
            _ => None,
        }
    }
}
