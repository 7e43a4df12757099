//! One axis of a sweep: a dotted case key and the values it takes, from an explicit list or a linear or
//! logarithmic range, with an optional unit for bare numbers.
//!
//! A range of `count` values from `a` to `b` is `a + (b − a)·i/(count − 1)` (linear) or
//! `a·(b/a)^(i/(count − 1))` (log), `i = 0 … count − 1`, computed in the unit the range is written in and
//! rounded to 12 significant digits so that `1e-13` does not come out as `9.999999999999999e-14`.

use crate::case::units::{parse_quantity, parse_unit, Dimension};
use crate::io::number_text::format_real;

/// How the values of an axis are spaced (and how its figures are drawn).
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Scale {
    Linear,
    Log,
}

/// One value an axis puts into the base case.
#[derive(Clone, Debug, PartialEq)]
pub struct AxisValue {
    /// What is written into the case (a number, or a string with a unit, or any other TOML value).
    pub toml: toml::Value,
    /// The value as written in the case, for listings (`"2 um/s"`, `0.05`, `"absorbing"`).
    pub text: String,
    /// The value in SI units when it is a quantity, for tables and figures.
    pub si: Option<f64>,
    /// Its SI dimension when it is a quantity.
    pub dimension: Option<Dimension>,
}

impl AxisValue {
    /// A value as given in the sweep file; a number with `unit` becomes the string `"<number> <unit>"`.
    pub fn from_toml(value: &toml::Value, unit: Option<&str>) -> Result<AxisValue, String> {
        match (value, unit) {
            (toml::Value::Integer(i), Some(unit)) => Ok(quantity_text(&format!("{i} {unit}"))?),
            (toml::Value::Float(x), Some(unit)) => {
                Ok(quantity_text(&format!("{} {unit}", format_real(finite(*x)?)))?)
            }
            (toml::Value::Integer(i), None) => Ok(AxisValue {
                toml: value.clone(),
                text: i.to_string(),
                si: Some(*i as f64),
                dimension: Some(Dimension::DIMENSIONLESS),
            }),
            (toml::Value::Float(x), None) => Ok(AxisValue {
                toml: value.clone(),
                text: format_real(finite(*x)?),
                si: Some(*x),
                dimension: Some(Dimension::DIMENSIONLESS),
            }),
            (toml::Value::String(s), _) => Ok(match parse_quantity(s) {
                Ok(q) => AxisValue {
                    toml: value.clone(),
                    text: format!("{s:?}"),
                    si: Some(q.si),
                    dimension: Some(q.dimension),
                },
                // Not a quantity: a choice such as "absorbing"; the case file decides whether it is valid.
                Err(_) => {
                    AxisValue { toml: value.clone(), text: format!("{s:?}"), si: None, dimension: None }
                }
            }),
            (other, _) => {
                Ok(AxisValue { toml: other.clone(), text: other.to_string(), si: None, dimension: None })
            }
        }
    }
}

impl AxisValue {
    /// The value `si` (SI units) written as `self` is: in the same unit (rounded to 12 significant digits),
    /// or as a bare real number. For values a search chooses between an axis's ends.
    pub fn at_si(&self, si: f64) -> Result<AxisValue, String> {
        if self.si == Some(si) {
            return Ok(self.clone());
        }
        match &self.toml {
            toml::Value::String(s) => {
                let (_, unit) =
                    split_number(s).ok_or_else(|| format!("{s:?} does not start with a number"))?;
                let unit = unit.trim();
                let factor = if unit.is_empty() {
                    1.0
                } else {
                    parse_unit(unit).map_err(|e| format!("the unit {unit:?} {e}"))?.0
                };
                quantity_text(format!("{} {unit}", format_real(round_12(si / factor))).trim())
            }
            _ => AxisValue::from_toml(&toml::Value::Float(round_12(si)), None),
        }
    }
}

fn finite(x: f64) -> Result<f64, String> {
    if x.is_finite() {
        Ok(x)
    } else {
        Err(format!("{x} is not a finite number"))
    }
}

/// `"<number> <unit>"` as an axis value; the unit must be known.
fn quantity_text(text: &str) -> Result<AxisValue, String> {
    let q = parse_quantity(text).map_err(|e| format!("\"{text}\" {e}"))?;
    Ok(AxisValue {
        toml: toml::Value::String(text.to_string()),
        text: format!("{text:?}"),
        si: Some(q.si),
        dimension: Some(q.dimension),
    })
}

/// An end of a range: a bare number (in `unit`, if given) or a string `"<number> <unit>"`.
struct RangeEnd {
    number: f64,
    unit: Option<String>,
    integer: bool,
}

fn range_end(name: &str, value: &toml::Value, unit: Option<&str>) -> Result<RangeEnd, String> {
    match value {
        toml::Value::Integer(i) => {
            Ok(RangeEnd { number: *i as f64, unit: unit.map(str::to_string), integer: true })
        }
        toml::Value::Float(x) => {
            Ok(RangeEnd { number: finite(*x)?, unit: unit.map(str::to_string), integer: false })
        }
        toml::Value::String(s) => {
            if unit.is_some() {
                return Err(format!(
                    "{name} = {s:?} carries its own unit; with unit = ... give {name} as a bare number"
                ));
            }
            parse_quantity(s).map_err(|e| format!("{name} = {s:?} {e}"))?;
            let (number, unit_text) =
                split_number(s).ok_or_else(|| format!("{name} = {s:?} does not start with a number"))?;
            let unit_text = unit_text.trim();
            Ok(RangeEnd {
                number,
                unit: (!unit_text.is_empty()).then(|| unit_text.to_string()),
                integer: false,
            })
        }
        other => Err(format!("{name} = {other} must be a number or a string with a unit")),
    }
}

/// The longest leading part of `text` that reads as a number, and the rest.
fn split_number(text: &str) -> Option<(f64, &str)> {
    let text = text.trim();
    (1..=text.len()).rev().filter(|&n| text.is_char_boundary(n)).find_map(|n| {
        text[..n].trim_end().parse::<f64>().ok().filter(|x| x.is_finite()).map(|x| (x, &text[n..]))
    })
}

/// Round to 12 significant digits (removes the last-bit noise of `powf` and of the linear steps).
fn round_12(x: f64) -> f64 {
    if x == 0.0 || !x.is_finite() {
        return x;
    }
    format!("{x:.11e}").parse().unwrap_or(x)
}

/// The values of a range `{ from, to, count, scale }`, each written in the unit of `from` (or `unit`).
pub fn range_values(
    from: &toml::Value,
    to: &toml::Value,
    count: i64,
    scale: Scale,
    unit: Option<&str>,
) -> Result<Vec<AxisValue>, String> {
    if let Some(unit) = unit {
        parse_unit(unit).map_err(|e| format!("unit = {unit:?}: the unit {e}"))?;
    }
    if count < 1 {
        return Err(format!("count = {count} gives an empty range (at least 1 value is needed)"));
    }
    // Checked before the values are made: a sweep never has more cases than this.
    if count as u64 > super::expand::MAX_CASES as u64 {
        return Err(format!(
            "count = {count} is more than the {} cases a sweep may have; use a smaller count",
            super::expand::MAX_CASES
        ));
    }
    let a = range_end("from", from, unit)?;
    let b = range_end("to", to, unit)?;
    // Express `to` in the unit of `from`, after checking both are the same kind of quantity.
    let factor = |end: &RangeEnd| -> Result<(f64, Dimension), String> {
        match &end.unit {
            Some(u) => parse_unit(u).map_err(|e| format!("the unit {u:?} {e}")),
            None => Ok((1.0, Dimension::DIMENSIONLESS)),
        }
    };
    let (fa, da) = factor(&a)?;
    let (fb, db) = factor(&b)?;
    if da != db {
        return Err(format!(
            "from is {} but to is {}: both ends must be the same kind of quantity",
            da.describe(),
            db.describe()
        ));
    }
    let (x0, x1) = (a.number, b.number * fb / fa);
    if scale == Scale::Log && (x0 <= 0.0 || x1 <= 0.0) {
        return Err(format!("a log range needs positive ends (from = {x0}, to = {x1})"));
    }
    if count > 1 && x0 == x1 {
        return Err(format!("from and to are equal, so count = {count} would repeat one value"));
    }
    let n = count as usize;
    let integer = a.integer && b.integer && a.unit.is_none();
    let mut values = Vec::with_capacity(n);
    for i in 0..n {
        let t = if n == 1 { 0.0 } else { i as f64 / (n - 1) as f64 };
        let x = match (i, scale) {
            (0, _) => x0,
            (i, _) if i + 1 == n => x1,
            (_, Scale::Linear) => x0 + (x1 - x0) * t,
            (_, Scale::Log) => x0 * (x1 / x0).powf(t),
        };
        let x = round_12(x);
        let value = match &a.unit {
            Some(u) => quantity_text(&format!("{} {u}", format_real(x)))?,
            None if integer => AxisValue::from_toml(&toml::Value::Integer(x.round() as i64), None)?,
            None => AxisValue::from_toml(&toml::Value::Float(x), None)?,
        };
        values.push(value);
    }
    Ok(values)
}

/// The SI unit of a dimension as text: `m`, `m^2`, `m s^-1`, `kg m^-1 s^-1`, or `1` when dimensionless.
pub fn si_unit_label(d: Dimension) -> String {
    let mut parts = Vec::new();
    for (name, power) in [("kg", d.kg), ("m", d.m), ("s", d.s)] {
        match power {
            0 => {}
            1 => parts.push(name.to_string()),
            p => parts.push(format!("{name}^{p}")),
        }
    }
    if parts.is_empty() {
        "1".to_string()
    } else {
        parts.join(" ")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn texts(values: &[AxisValue]) -> Vec<String> {
        values.iter().map(|v| v.text.clone()).collect()
    }

    #[test]
    fn log_range_in_written_unit_has_exact_decades() {
        let v = range_values(
            &toml::Value::String("1e-14 m^2".into()),
            &toml::Value::String("1e-12 m^2".into()),
            3,
            Scale::Log,
            None,
        )
        .unwrap();
        assert_eq!(texts(&v), ["\"1e-14 m^2\"", "\"1e-13 m^2\"", "\"1e-12 m^2\""]);
        assert_eq!(v[1].si, Some(1e-13));
    }

    #[test]
    fn linear_range_with_axis_unit_and_mixed_ends() {
        let v =
            range_values(&toml::Value::Float(0.5), &toml::Value::Integer(2), 4, Scale::Linear, Some("um/s"))
                .unwrap();
        assert_eq!(texts(&v), ["\"0.5 um/s\"", "\"1 um/s\"", "\"1.5 um/s\"", "\"2 um/s\""]);
        assert_eq!(v[3].si, Some(2e-6));
        assert_eq!(v[0].dimension, Some(Dimension::VELOCITY));
        // `to` in another unit of the same kind is converted into the unit of `from`.
        let v = range_values(
            &toml::Value::String("500 nm".into()),
            &toml::Value::String("2 um".into()),
            2,
            Scale::Linear,
            None,
        )
        .unwrap();
        assert_eq!(texts(&v), ["\"500 nm\"", "\"2000 nm\""]);
    }

    #[test]
    fn integer_ends_give_integers() {
        let v = range_values(&toml::Value::Integer(10), &toml::Value::Integer(1000), 3, Scale::Log, None)
            .unwrap();
        assert_eq!(
            v.iter().map(|v| v.toml.clone()).collect::<Vec<_>>(),
            [10, 100, 1000].map(toml::Value::Integer)
        );
    }

    #[test]
    fn bad_ranges_say_why() {
        let s = |t: &str| toml::Value::String(t.into());
        let err = |r: Result<Vec<AxisValue>, String>| r.unwrap_err();
        assert!(err(range_values(&s("1 um"), &s("2 um"), 0, Scale::Linear, None)).contains("empty range"));
        assert!(err(range_values(&s("1 um"), &s("2 s"), 3, Scale::Linear, None)).contains("same kind"));
        assert!(err(range_values(&s("0 um"), &s("2 um"), 3, Scale::Log, None)).contains("positive"));
        assert!(err(range_values(&s("1 parsec"), &s("2 um"), 3, Scale::Log, None)).contains("unknown unit"));
        let e = err(range_values(
            &toml::Value::Integer(1),
            &toml::Value::Integer(2),
            2,
            Scale::Linear,
            Some("furlong"),
        ));
        assert!(e.contains("unknown unit"), "{e}");
    }

    #[test]
    fn list_values_keep_choices_and_attach_units() {
        let v = AxisValue::from_toml(&toml::Value::Float(0.05), None).unwrap();
        assert_eq!((v.text.as_str(), v.si), ("0.05", Some(0.05)));
        let v = AxisValue::from_toml(&toml::Value::Integer(3), Some("um")).unwrap();
        assert_eq!(v.toml, toml::Value::String("3 um".into()));
        assert_eq!(v.si, Some(3e-6));
        let v = AxisValue::from_toml(&toml::Value::String("absorbing".into()), None).unwrap();
        assert_eq!(v.si, None);
        assert!(AxisValue::from_toml(&toml::Value::Integer(3), Some("zorkmid")).is_err());
    }

    #[test]
    fn values_at_si_keep_the_unit_written() {
        let v = AxisValue::from_toml(&toml::Value::String("2 um/s".into()), None).unwrap();
        let w = v.at_si(3.5e-6).unwrap();
        assert_eq!((w.text.as_str(), w.si), ("\"3.5 um/s\"", Some(3.5e-6)));
        assert_eq!(v.at_si(2e-6).unwrap(), v);
        let v = AxisValue::from_toml(&toml::Value::Float(0.1), None).unwrap();
        assert_eq!(v.at_si(0.2 + 0.1).unwrap().toml, toml::Value::Float(0.3));
    }

    #[test]
    fn si_labels() {
        assert_eq!(si_unit_label(Dimension::VELOCITY), "m s^-1");
        assert_eq!(si_unit_label(Dimension::AREA), "m^2");
        assert_eq!(si_unit_label(Dimension::DIMENSIONLESS), "1");
        assert_eq!(si_unit_label(Dimension::VISCOSITY), "kg m^-1 s^-1");
    }
}
