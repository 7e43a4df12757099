//! Text form of real numbers in text outputs (CSV, XDMF): the shortest decimal that reads back as the very
//! same `f64`, so nothing is lost between the HDF5 file and the CSV table.

/// Shortest round-trip decimal of `x`: plain notation for moderate magnitudes (`0.25`, `1200`), scientific
/// otherwise (`8e-6`, `6.02214076e23`); `inf`, `-inf` and `nan` for non-finite values. Rust's float formatting
/// without a precision already prints the shortest string that parses back exactly (std documentation).
pub fn format_real(x: f64) -> String {
    if x.is_nan() {
        "nan".to_string()
    } else if x.is_infinite() {
        if x > 0.0 { "inf" } else { "-inf" }.to_string()
    } else if x == 0.0 || (1e-3..1e6).contains(&x.abs()) {
        format!("{x}")
    } else {
        format!("{x:e}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn values_read_back_bit_for_bit() {
        // Seeded random bit patterns, plus awkward cases.
        let mut rng = numkit::Xoshiro256StarStar::seed_from_u64(0x9E37_79B9_7F4A_7C15);
        let mut values =
            vec![0.1, 1.0 / 3.0, 8e-6, 2000.0 / 3600.0, 1e300, 5e-324, f64::MAX, f64::MIN_POSITIVE, -0.0];
        for _ in 0..20_000 {
            let x = f64::from_bits(rng.next_u64());
            if x.is_finite() {
                values.push(x);
            }
        }
        for x in values {
            let text = format_real(x);
            let back: f64 = text.parse().unwrap();
            assert_eq!(back.to_bits(), x.to_bits(), "{x:e} -> {text}");
        }
    }

    #[test]
    fn readable_forms() {
        assert_eq!(format_real(0.0), "0");
        assert_eq!(format_real(0.25), "0.25");
        assert_eq!(format_real(1200.0), "1200");
        assert_eq!(format_real(8e-6), "8e-6");
        assert_eq!(format_real(2.5e7), "2.5e7");
        assert_eq!(format_real(f64::INFINITY), "inf");
        assert_eq!(format_real(f64::NEG_INFINITY), "-inf");
        assert_eq!(format_real(f64::NAN), "nan");
        assert_eq!("inf".parse::<f64>().unwrap(), f64::INFINITY);
    }
}
