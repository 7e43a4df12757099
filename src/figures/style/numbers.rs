//! Numbers on figures: significant digits, never more than the data need, and tick sets whose labels all differ.

/// `v` to `digits` significant digits: plain between 10⁻³ and 10⁵, otherwise `m×10ⁿ`; trailing zeros dropped.
pub fn significant(v: f64, digits: usize) -> String {
    if !v.is_finite() {
        return if v.is_nan() {
            "missing".into()
        } else if v > 0.0 {
            "∞".into()
        } else {
            "−∞".into()
        };
    }
    if v == 0.0 {
        return "0".into();
    }
    let digits = digits.max(1);
    let exponent = v.abs().log10().floor() as i32;
    // Rounding can carry into the next decade (9.99 → 10.0).
    let rounded = round_to(v, digits, exponent);
    let exponent = if rounded.abs() >= 10f64.powi(exponent + 1) { exponent + 1 } else { exponent };
    let text = if (-3..5).contains(&exponent) {
        let decimals = (digits as i32 - 1 - exponent).max(0) as usize;
        trim(format!("{rounded:.decimals$}"))
    } else {
        let mantissa = trim(format!("{:.*}", digits - 1, rounded / 10f64.powi(exponent)));
        if mantissa == "1" {
            format!("10{}", superscript(exponent))
        } else {
            format!("{mantissa}×10{}", superscript(exponent))
        }
    };
    text.replacen('-', "−", 1)
}

fn round_to(v: f64, digits: usize, exponent: i32) -> f64 {
    let scale = 10f64.powi(digits as i32 - 1 - exponent);
    (v * scale).round() / scale
}

fn trim(s: String) -> String {
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// Unicode superscript of an integer (DejaVu has the glyphs).
pub fn superscript(n: i32) -> String {
    n.to_string()
        .chars()
        .map(|c| match c {
            '-' => '⁻',
            '0' => '⁰',
            '1' => '¹',
            '2' => '²',
            '3' => '³',
            '4' => '⁴',
            '5' => '⁵',
            '6' => '⁶',
            '7' => '⁷',
            '8' => '⁸',
            _ => '⁹',
        })
        .collect()
}

/// Labels for `ticks` with the fewest significant digits (at least 1, at most 8) that state every tick's value
/// (to a thousandth of the smallest gap) and make every label differ.
pub fn tick_labels(ticks: &[f64]) -> Vec<String> {
    let gap =
        ticks.windows(2).map(|w| (w[1] - w[0]).abs()).filter(|g| *g > 0.0).fold(f64::INFINITY, f64::min);
    let exact = |t: f64, digits: usize| {
        t == 0.0
            || !gap.is_finite()
            || (round_to(t, digits, t.abs().log10().floor() as i32) - t).abs() <= 1e-3 * gap
    };
    for digits in 1..=8 {
        if !ticks.iter().all(|&t| exact(t, digits)) {
            continue;
        }
        let labels: Vec<String> = ticks.iter().map(|&t| significant(t, digits)).collect();
        let mut sorted = labels.clone();
        sorted.sort();
        sorted.dedup();
        if sorted.len() == labels.len() {
            return labels;
        }
    }
    ticks.iter().map(|&t| significant(t, 8)).collect()
}

/// Round ticks of step 1, 2 or 5 × 10ⁿ inside [lo, hi], about `target` of them (common practice).
pub fn linear_ticks(lo: f64, hi: f64, target: usize) -> Vec<f64> {
    if !(lo.is_finite() && hi.is_finite()) || hi <= lo {
        return vec![lo];
    }
    let raw = (hi - lo) / target.max(2) as f64;
    let power = 10f64.powf(raw.log10().floor());
    let step =
        [1.0, 2.0, 5.0, 10.0].into_iter().map(|m| m * power).find(|s| *s >= raw).unwrap_or(10.0 * power);
    let first = (lo / step).ceil() as i64;
    let last = (hi / step).floor() as i64;
    // Multiples of the step, so 0 is exactly 0 and no tick drifts by round-off.
    (first..=last).map(|k| if k == 0 { 0.0 } else { k as f64 * step }).collect()
}

/// Ticks of a log axis on [lo, hi] (both > 0): the powers of ten inside, with 2 and 5 between them when fewer
/// than three decades are shown, every other power when more than eight.
pub fn log_ticks(lo: f64, hi: f64) -> Vec<f64> {
    let (a, b) = (lo.log10().ceil() as i32, hi.log10().floor() as i32);
    let decades = b - a;
    let stride = if decades > 8 { 2 } else { 1 };
    let mut ticks: Vec<f64> = (a..=b).filter(|e| (e - a) % stride == 0).map(|e| 10f64.powi(e)).collect();
    if decades < 3 {
        for e in a - 1..=b {
            for m in [2.0, 5.0] {
                let t = m * 10f64.powi(e);
                if t >= lo && t <= hi {
                    ticks.push(t);
                }
            }
        }
        ticks.sort_by(f64::total_cmp);
    }
    ticks
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn significant_digits() {
        assert_eq!(significant(0.0112345, 2), "0.011");
        assert_eq!(significant(123456.0, 3), "1.23×10⁵");
        assert_eq!(significant(1.5e-6, 2), "1.5×10⁻⁶");
        assert_eq!(significant(1e-6, 2), "10⁻⁶");
        assert_eq!(significant(9.996, 3), "10");
        assert_eq!(significant(-2.5, 3), "−2.5");
        assert_eq!(significant(250.0, 2), "250");
        assert_eq!(significant(f64::INFINITY, 2), "∞");
    }

    #[test]
    fn tick_labels_all_differ() {
        let ticks = [0.0110, 0.0112, 0.0114, 0.0116];
        let labels = tick_labels(&ticks);
        assert_eq!(labels, ["0.011", "0.0112", "0.0114", "0.0116"]);
        assert_eq!(tick_labels(&[0.0, 0.5, 1.0]), ["0", "0.5", "1"]);
        // 1.5 is never rounded to "2", even when the labels would still differ.
        assert_eq!(tick_labels(&[0.0, 0.5, 1.0, 1.5]), ["0", "0.5", "1", "1.5"]);
        assert_eq!(tick_labels(&[100.0, 150.0, 200.0]), ["100", "150", "200"]);
    }

    #[test]
    fn tick_sets() {
        assert_eq!(linear_ticks(0.0, 1.0, 5), [0.0, 0.2, 0.4, 0.6000000000000001, 0.8, 1.0]);
        assert_eq!(linear_ticks(-0.3, 0.3, 4).iter().filter(|t| **t == 0.0).count(), 1);
        assert_eq!(log_ticks(0.5, 2000.0), [1.0, 10.0, 100.0, 1000.0]);
        assert_eq!(log_ticks(0.3, 20.0), [0.5, 1.0, 2.0, 5.0, 10.0, 20.0]);
    }
}
