//! Display units: each quantity shown in the unit a modeller reads (µm, µm/s, nM/pM/fM, s/min/h), converted from the
//! SI values the tables hold, with the unit written in every axis label.

use crate::case::units::{parse_unit, Dimension, AVOGADRO};

/// How a quantity is shown: value in display unit = SI value × `factor`.
#[derive(Clone, Debug, PartialEq)]
pub struct DisplayUnit {
    pub factor: f64,
    /// Unit text for labels; empty for a dimensionless quantity.
    pub label: String,
}

impl DisplayUnit {
    pub fn dimensionless() -> Self {
        DisplayUnit { factor: 1.0, label: String::new() }
    }

    /// The display unit of a quantity whose SI unit is written `si` (as the tables write it: `m s^-1`,
    /// `molecules/m^3`, `Pa`, `1`); `typical` (SI) picks between s, min and h for times. An unknown unit is
    /// shown as written.
    pub fn of(si: &str, typical: f64) -> Self {
        let si = si.trim();
        if si.is_empty() || si == "1" {
            return Self::dimensionless();
        }
        let Ok((factor, dimension)) = parse_unit(si) else {
            return DisplayUnit { factor: 1.0, label: si.to_string() };
        };
        let shown = |per_si: f64, label: &str| DisplayUnit { factor: factor * per_si, label: label.into() };
        match dimension {
            Dimension::LENGTH => shown(1e6, "µm"),
            Dimension::AREA => shown(1e12, "µm²"),
            Dimension::VELOCITY => shown(1e6, "µm/s"),
            Dimension::DIFFUSIVITY => shown(1e12, "µm²/s"),
            Dimension::CONCENTRATION => {
                // nM for what a cell biologist calls a concentration; pM and fM for the small clouds of one
                // cell, so numbers stay between 0.1 and 1000.
                let nanomolar = (typical * factor).abs() / (AVOGADRO * 1e3 * 1e-9);
                let (per, label) = if nanomolar >= 0.1 || nanomolar == 0.0 {
                    (1e-9, "nM")
                } else if nanomolar >= 1e-4 {
                    (1e-12, "pM")
                } else {
                    (1e-15, "fM")
                };
                shown(1.0 / (AVOGADRO * 1e3 * per), label)
            }
            Dimension::TIME => {
                let t = (typical * factor).abs();
                if t >= 3.0 * 3600.0 {
                    shown(1.0 / 3600.0, "h")
                } else if t >= 180.0 {
                    shown(1.0 / 60.0, "min")
                } else {
                    shown(1.0, "s")
                }
            }
            Dimension::RATE if si.contains("molecule") => shown(1.0, "molecules/s"),
            Dimension::RATE => shown(1.0, "1/s"),
            Dimension::PRESSURE => shown(1.0, "Pa"),
            Dimension::DIMENSIONLESS => DisplayUnit { factor, label: String::new() },
            _ => DisplayUnit { factor: 1.0, label: si.to_string() },
        }
    }
}

/// An axis label: the quantity in words and its unit in parentheses (`dimensionless` when it has none).
pub fn axis_label(words: &str, unit: &DisplayUnit) -> String {
    if unit.label.is_empty() {
        format!("{words} (dimensionless)")
    } else {
        format!("{words} ({})", unit.label)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn si_units_become_display_units() {
        let v = DisplayUnit::of("m s^-1", 1e-6);
        assert_eq!(v.label, "µm/s");
        assert!((v.factor - 1e6).abs() < 1e-6);
        let c = DisplayUnit::of("molecules/m^3", 1e17);
        assert_eq!(c.label, "nM");
        assert_eq!(DisplayUnit::of("molecules/m^3", 6e14).label, "pM");
        assert_eq!(DisplayUnit::of("molecules/m^3", 6e10).label, "fM");
        // 1 nM = 6.022e17 molecules/m³ (SI Brochure 2019, Avogadro constant).
        assert!((6.022_140_76e17 * c.factor - 1.0).abs() < 1e-12);
        assert_eq!(DisplayUnit::of("s", 7200.0).label, "min");
        assert_eq!(DisplayUnit::of("s", 36000.0).label, "h");
        assert_eq!(DisplayUnit::of("molecules/s", 1.0).label, "molecules/s");
        assert_eq!(DisplayUnit::of("1", 1.0).label, "");
        assert_eq!(DisplayUnit::of("m", 1e-5).label, "µm");
        assert_eq!(axis_label("cell radius", &DisplayUnit::of("m", 1e-5)), "cell radius (µm)");
    }
}
