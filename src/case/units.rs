//! Units of the case file: a value is a bare SI number or a string `"<number> <unit expression>"`, and every
//! key expects one physical dimension. Parsing happens here, once, at the edge; everything past the case
//! module is SI.
//!
//! A unit expression is a product of factors separated by spaces, `*` or `·`; each factor is a unit name
//! with an optional integer power (`^2`, `^-1`, or the superscripts `²`, `³`, `⁻¹`), or the number `1`.
//! A `/` divides by the single factor that follows it: `"m^2/s"`, `"/h"`, `"molecules/h"`, `"1/s"`,
//! `"Pa s"`, `"m/s/s"` (= m s^-2). Molecules are a dimensionless count, so `"2000 /h"` and
//! `"2000 molecules/h"` are the same secretion rate, and a molar concentration becomes molecules per m^3
//! through the Avogadro constant.

use std::fmt;

/// The Avogadro constant (1/mol), exact in the SI since 2019 (BIPM, The International System of Units,
/// 9th edition, 2019, Table 1).
pub const AVOGADRO: f64 = 6.022_140_76e23;

/// Physical dimension as exponents of metre, second and kilogram (molecule counts are dimensionless).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Dimension {
    pub m: i32,
    pub s: i32,
    pub kg: i32,
}

impl Dimension {
    pub const DIMENSIONLESS: Dimension = Dimension { m: 0, s: 0, kg: 0 };
    pub const LENGTH: Dimension = Dimension { m: 1, s: 0, kg: 0 };
    pub const AREA: Dimension = Dimension { m: 2, s: 0, kg: 0 };
    pub const TIME: Dimension = Dimension { m: 0, s: 1, kg: 0 };
    pub const MASS: Dimension = Dimension { m: 0, s: 0, kg: 1 };
    /// A velocity (m/s); also the unit of a surface rate constant κ.
    pub const VELOCITY: Dimension = Dimension { m: 1, s: -1, kg: 0 };
    /// A diffusivity (m^2/s).
    pub const DIFFUSIVITY: Dimension = Dimension { m: 2, s: -1, kg: 0 };
    /// A rate (1/s); also molecules per second, since counts are dimensionless.
    pub const RATE: Dimension = Dimension { m: 0, s: -1, kg: 0 };
    /// A dynamic viscosity (Pa s = kg m^-1 s^-1).
    pub const VISCOSITY: Dimension = Dimension { m: -1, s: -1, kg: 1 };
    /// A number concentration (molecules/m^3 = m^-3).
    pub const CONCENTRATION: Dimension = Dimension { m: -3, s: 0, kg: 0 };
    pub const VOLUME: Dimension = Dimension { m: 3, s: 0, kg: 0 };
    pub const PRESSURE: Dimension = Dimension { m: -1, s: -2, kg: 1 };

    fn times(self, other: Dimension, power: i32) -> Dimension {
        Dimension { m: self.m + power * other.m, s: self.s + power * other.s, kg: self.kg + power * other.kg }
    }

    /// A phrase for error messages: "a length", "a time", ..., or the SI exponents when the dimension has no
    /// common name.
    pub fn describe(self) -> String {
        let named = [
            (Dimension::DIMENSIONLESS, "a plain number (no dimension)"),
            (Dimension::LENGTH, "a length"),
            (Dimension::AREA, "an area"),
            (Dimension::VOLUME, "a volume"),
            (Dimension::TIME, "a time"),
            (Dimension::MASS, "a mass"),
            (Dimension::VELOCITY, "a velocity"),
            (Dimension::DIFFUSIVITY, "a diffusivity (area per time)"),
            (Dimension::RATE, "a rate (per time)"),
            (Dimension::VISCOSITY, "a viscosity"),
            (Dimension::CONCENTRATION, "a concentration (per volume)"),
            (Dimension::PRESSURE, "a pressure"),
        ];
        match named.iter().find(|(d, _)| *d == self) {
            Some((_, name)) => name.to_string(),
            None => format!("a quantity in {self}"),
        }
    }
}

impl fmt::Display for Dimension {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let mut parts = Vec::new();
        for (name, power) in [("kg", self.kg), ("m", self.m), ("s", self.s)] {
            match power {
                0 => {}
                1 => parts.push(name.to_string()),
                p => parts.push(format!("{name}^{p}")),
            }
        }
        if parts.is_empty() {
            write!(f, "1")
        } else {
            write!(f, "{}", parts.join(" "))
        }
    }
}

/// A value converted to SI, with its dimension.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Quantity {
    pub si: f64,
    pub dimension: Dimension,
}

/// Why a quantity string could not be read. The caller adds the key and line.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum UnitError {
    #[error("does not start with a number")]
    NoNumber,
    #[error("gives no unit (write a bare number for SI, or a number and a unit such as \"10 um\")")]
    NoUnit,
    #[error("has the unknown unit \"{unit}\"")]
    UnknownUnit { unit: String },
    #[error("has a malformed unit expression \"{expression}\": {reason}")]
    Malformed { expression: String, reason: String },
    #[error("is not a finite number")]
    NotFinite,
}

/// Units by name: factor to SI and dimension. Prefixed forms are listed explicitly (no generic prefix rule),
/// so that "min" can never be read as milli-"in" and "mM" never as milli-metre.
fn unit_by_name(name: &str) -> Option<(f64, Dimension)> {
    use Dimension as D;
    let molar = 1e3 * AVOGADRO; // mol/L → molecules/m^3
    let unit = match name {
        "1" => (1.0, D::DIMENSIONLESS),
        "m" => (1.0, D::LENGTH),
        "km" => (1e3, D::LENGTH),
        "cm" => (1e-2, D::LENGTH),
        "mm" => (1e-3, D::LENGTH),
        "um" | "µm" | "μm" => (1e-6, D::LENGTH),
        "nm" => (1e-9, D::LENGTH),
        "s" => (1.0, D::TIME),
        "ms" => (1e-3, D::TIME),
        "us" | "µs" | "μs" => (1e-6, D::TIME),
        "min" => (60.0, D::TIME),
        "h" | "hr" => (3600.0, D::TIME),
        "d" | "day" | "days" => (86400.0, D::TIME),
        "kg" => (1.0, D::MASS),
        "g" => (1e-3, D::MASS),
        "mg" => (1e-6, D::MASS),
        "Pa" => (1.0, D::PRESSURE),
        "kPa" => (1e3, D::PRESSURE),
        "mPa" => (1e-3, D::PRESSURE),
        "L" => (1e-3, D::VOLUME),
        "mL" => (1e-6, D::VOLUME),
        "uL" | "µL" | "μL" => (1e-9, D::VOLUME),
        "M" => (molar, D::CONCENTRATION),
        "mM" => (molar * 1e-3, D::CONCENTRATION),
        "uM" | "µM" | "μM" => (molar * 1e-6, D::CONCENTRATION),
        "nM" => (molar * 1e-9, D::CONCENTRATION),
        "pM" => (molar * 1e-12, D::CONCENTRATION),
        "fM" => (molar * 1e-15, D::CONCENTRATION),
        "mol" => (AVOGADRO, D::DIMENSIONLESS),
        "molecule" | "molecules" => (1.0, D::DIMENSIONLESS),
        _ => return None,
    };
    Some(unit)
}

/// Parse a unit expression such as `"m^2/s"` or `"/h"` into (factor to SI, dimension).
pub fn parse_unit(expression: &str) -> Result<(f64, Dimension), UnitError> {
    let malformed = |reason: &str| UnitError::Malformed {
        expression: expression.to_string(),
        reason: reason.to_string(),
    };
    // Split into factor tokens, remembering whether each follows a '/'.
    let mut tokens: Vec<(bool, String)> = Vec::new();
    let mut current = String::new();
    let mut divide_next = false;
    let mut current_divides = false;
    let flush = |current: &mut String, divides: bool, tokens: &mut Vec<(bool, String)>| {
        if !current.is_empty() {
            tokens.push((divides, std::mem::take(current)));
        }
    };
    for ch in expression.chars() {
        match ch {
            c if c.is_whitespace() || c == '*' || c == '·' || c == '⋅' => {
                flush(&mut current, current_divides, &mut tokens);
            }
            '/' => {
                flush(&mut current, current_divides, &mut tokens);
                if divide_next {
                    return Err(malformed("two '/' in a row"));
                }
                divide_next = true;
            }
            c => {
                if current.is_empty() {
                    current_divides = divide_next;
                    divide_next = false;
                }
                current.push(c);
            }
        }
    }
    flush(&mut current, current_divides, &mut tokens);
    if divide_next {
        return Err(malformed("'/' is not followed by a unit"));
    }
    if tokens.is_empty() {
        return Err(UnitError::NoUnit);
    }
    let mut factor = 1.0;
    let mut dimension = Dimension::DIMENSIONLESS;
    for (divides, token) in tokens {
        let (name, power) =
            split_power(&token).ok_or_else(|| malformed(&format!("bad power in \"{token}\"")))?;
        let (unit_factor, unit_dimension) =
            unit_by_name(name).ok_or_else(|| UnitError::UnknownUnit { unit: name.to_string() })?;
        let power = if divides { -power } else { power };
        factor *= unit_factor.powi(power);
        dimension = dimension.times(unit_dimension, power);
    }
    Ok((factor, dimension))
}

/// Split `"m^-2"`, `"m²"` or `"s⁻¹"` into the unit name and its integer power.
fn split_power(token: &str) -> Option<(&str, i32)> {
    if let Some((name, power)) = token.split_once('^') {
        let power = power.parse::<i32>().ok()?;
        return (!name.is_empty()).then_some((name, power));
    }
    let superscript = |c: char| "⁰¹²³⁴⁵⁶⁷⁸⁹⁻".contains(c);
    let start = token.char_indices().find(|&(_, c)| superscript(c)).map(|(i, _)| i);
    let Some(start) = start else {
        return Some((token, 1));
    };
    let (name, sup) = token.split_at(start);
    let mut digits = String::new();
    for c in sup.chars() {
        let plain = match c {
            '⁻' => '-',
            '⁰' => '0',
            '¹' => '1',
            '²' => '2',
            '³' => '3',
            '⁴' => '4',
            '⁵' => '5',
            '⁶' => '6',
            '⁷' => '7',
            '⁸' => '8',
            '⁹' => '9',
            _ => return None,
        };
        digits.push(plain);
    }
    let power = digits.parse::<i32>().ok()?;
    (!name.is_empty()).then_some((name, power))
}

/// Length in bytes of the leading decimal number of `text` (sign, digits, fraction, exponent), 0 if none.
fn number_prefix_len(text: &str) -> usize {
    let bytes = text.as_bytes();
    let mut i = 0;
    if i < bytes.len() && (bytes[i] == b'+' || bytes[i] == b'-') {
        i += 1;
    }
    let digits_start = i;
    while i < bytes.len() && bytes[i].is_ascii_digit() {
        i += 1;
    }
    let mut mantissa_digits = i - digits_start;
    if i < bytes.len() && bytes[i] == b'.' {
        i += 1;
        let fraction_start = i;
        while i < bytes.len() && bytes[i].is_ascii_digit() {
            i += 1;
        }
        mantissa_digits += i - fraction_start;
    }
    if mantissa_digits == 0 {
        return 0;
    }
    // An exponent only if digits follow: "2 e" is not a number with an exponent.
    if i < bytes.len() && (bytes[i] == b'e' || bytes[i] == b'E') {
        let mut j = i + 1;
        if j < bytes.len() && (bytes[j] == b'+' || bytes[j] == b'-') {
            j += 1;
        }
        let exponent_start = j;
        while j < bytes.len() && bytes[j].is_ascii_digit() {
            j += 1;
        }
        if j > exponent_start {
            i = j;
        }
    }
    i
}

/// Round to 15 significant digits: removes the last-bit noise of the unit factor (100 × 1e-6 is
/// 9.999999999999999e-5 in binary; 1e-4 after rounding), so that "100 um" and 1e-4 are the same value.
/// A decimal number has at most 15 significant digits that survive in an f64, so nothing written is lost.
fn round_to_15_digits(x: f64) -> f64 {
    if !x.is_finite() || x == 0.0 {
        return x;
    }
    format!("{x:.14e}").parse().unwrap_or(x)
}

/// Parse `"<number> <unit expression>"` into SI. The unit is required; a bare SI value is written as a TOML
/// number instead of a string.
pub fn parse_quantity(text: &str) -> Result<Quantity, UnitError> {
    let text = text.trim();
    let n = number_prefix_len(text);
    if n == 0 {
        return Err(UnitError::NoNumber);
    }
    let number: f64 = text[..n].parse().map_err(|_| UnitError::NoNumber)?;
    let (factor, dimension) = parse_unit(&text[n..])?;
    let si = round_to_15_digits(number * factor);
    if !si.is_finite() {
        return Err(UnitError::NotFinite);
    }
    Ok(Quantity { si, dimension })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn si(text: &str) -> (f64, Dimension) {
        let q = parse_quantity(text).unwrap_or_else(|e| panic!("{text:?}: {e}"));
        (q.si, q.dimension)
    }

    #[test]
    fn unit_factors_leave_no_last_bit_noise() {
        assert_eq!(si("100 um").0, 1e-4);
        assert_eq!(si("800 um").0, 8e-4);
        assert_eq!(si("2.5 um").0, 2.5e-6);
        assert_eq!(si("60 um").0, 6e-5);
    }

    fn close(a: f64, b: f64) -> bool {
        (a - b).abs() <= 1e-12 * b.abs().max(f64::MIN_POSITIVE)
    }

    #[test]
    fn lengths() {
        for (text, expected) in [
            ("2 m", 2.0),
            ("3 cm", 3e-2),
            ("4 mm", 4e-3),
            ("8 um", 8e-6),
            ("8 µm", 8e-6),
            ("8 μm", 8e-6),
            ("5 nm", 5e-9),
            ("8um", 8e-6),
            ("100 um", 1e-4),
            ("-1.5e2 um", -1.5e-4),
        ] {
            let (v, d) = si(text);
            assert!(close(v, expected), "{text}: {v} vs {expected}");
            assert_eq!(d, Dimension::LENGTH, "{text}");
        }
    }

    #[test]
    fn times_and_rates() {
        for (text, expected, dim) in [
            ("1 s", 1.0, Dimension::TIME),
            ("250 ms", 0.25, Dimension::TIME),
            ("30 min", 1800.0, Dimension::TIME),
            ("6 h", 21600.0, Dimension::TIME),
            ("2 d", 172800.0, Dimension::TIME),
            ("3600 /h", 1.0, Dimension::RATE),
            ("2 1/s", 2.0, Dimension::RATE),
            ("7200 molecules/h", 2.0, Dimension::RATE),
            ("1 s^-1", 1.0, Dimension::RATE),
            ("1 s⁻¹", 1.0, Dimension::RATE),
        ] {
            let (v, d) = si(text);
            assert!(close(v, expected), "{text}: {v} vs {expected}");
            assert_eq!(d, dim, "{text}");
        }
    }

    #[test]
    fn compound_units() {
        for (text, expected, dim) in [
            ("2 um/s", 2e-6, Dimension::VELOCITY),
            ("1e-10 m^2/s", 1e-10, Dimension::DIFFUSIVITY),
            ("100 um^2/s", 1e-10, Dimension::DIFFUSIVITY),
            ("100 µm²/s", 1e-10, Dimension::DIFFUSIVITY),
            ("1e-13 m^2", 1e-13, Dimension::AREA),
            ("1e-3 Pa s", 1e-3, Dimension::VISCOSITY),
            ("1e-3 Pa*s", 1e-3, Dimension::VISCOSITY),
            ("1 mPa·s", 1e-3, Dimension::VISCOSITY),
            ("1 g/cm^3", 1e3, Dimension { m: -3, s: 0, kg: 1 }),
            ("1 kg", 1.0, Dimension::MASS),
            ("2 m/s/s", 2.0, Dimension { m: 1, s: -2, kg: 0 }),
            ("5 m^-3", 5.0, Dimension::CONCENTRATION),
            ("5 molecules/mL", 5e6, Dimension::CONCENTRATION),
            ("5 /L", 5e3, Dimension::CONCENTRATION),
            ("1 Pa", 1.0, Dimension::PRESSURE),
        ] {
            let (v, d) = si(text);
            assert!(close(v, expected), "{text}: {v} vs {expected}");
            assert_eq!(d, dim, "{text}");
        }
    }

    #[test]
    fn molar_concentrations_use_avogadro() {
        // 1 nM = 1e-9 mol/L = 1e-6 mol/m^3 = 6.02214076e17 molecules/m^3.
        for (text, expected) in [
            ("1 M", 6.022_140_76e26),
            ("1 mM", 6.022_140_76e23),
            ("1 uM", 6.022_140_76e20),
            ("1 µM", 6.022_140_76e20),
            ("1 nM", 6.022_140_76e17),
            ("2 pM", 2.0 * 6.022_140_76e14),
        ] {
            let (v, d) = si(text);
            assert!(close(v, expected), "{text}: {v} vs {expected}");
            assert_eq!(d, Dimension::CONCENTRATION, "{text}");
        }
    }

    #[test]
    fn errors() {
        assert_eq!(parse_quantity("8 parsecs"), Err(UnitError::UnknownUnit { unit: "parsecs".into() }));
        assert_eq!(parse_quantity("8 um/furlong"), Err(UnitError::UnknownUnit { unit: "furlong".into() }));
        assert_eq!(parse_quantity("um"), Err(UnitError::NoNumber));
        assert_eq!(parse_quantity("8"), Err(UnitError::NoUnit));
        assert_eq!(parse_quantity("1e400 m"), Err(UnitError::NotFinite));
        assert!(matches!(parse_quantity("8 m^x"), Err(UnitError::Malformed { .. })));
        assert!(matches!(parse_quantity("8 m/"), Err(UnitError::Malformed { .. })));
        assert!(matches!(parse_quantity("8 m//s"), Err(UnitError::Malformed { .. })));
        // "min" is minutes, not milli-"in"; "mM" is millimolar, not milli-metre.
        assert_eq!(si("1 min").1, Dimension::TIME);
        assert_eq!(si("1 mM").1, Dimension::CONCENTRATION);
    }

    #[test]
    fn dimension_descriptions() {
        assert_eq!(Dimension::TIME.describe(), "a time");
        assert_eq!(Dimension::LENGTH.describe(), "a length");
        assert_eq!(Dimension { m: 1, s: -2, kg: 0 }.describe(), "a quantity in m s^-2");
    }
}
