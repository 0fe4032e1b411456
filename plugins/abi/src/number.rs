//! The one number formatter for CSV files and the document.

/// Formats a finite number as the shortest text that reads back to the same `f64`.
///
/// Integers print without a decimal point (`139`, not `139.0`); very small or very large
/// magnitudes use exponent notation (`1e-7`). Non-finite values print as `inf`, `-inf` or
/// `nan`; steps never put `nan` into a table (see [`crate::Cell::number`]).
pub fn format_number(value: f64) -> String {
    if value.is_nan() {
        return "nan".into();
    }
    if value.is_infinite() {
        return if value > 0.0 { "inf".into() } else { "-inf".into() };
    }
    let magnitude = value.abs();
    if magnitude != 0.0 && !(1e-6..1e16).contains(&magnitude) {
        format!("{value:e}")
    } else if value == 0.0 {
        // Avoid printing "-0".
        "0".into()
    } else {
        format!("{value}")
    }
}

#[cfg(test)]
mod tests {
    use super::format_number;

    #[test]
    fn shortest_round_trip() {
        assert_eq!(format_number(139.0), "139");
        assert_eq!(format_number(0.1), "0.1");
        assert_eq!(format_number(-0.0), "0");
        assert_eq!(format_number(1e-7), "1e-7");
        assert_eq!(format_number(2.5e20), "2.5e20");
        assert_eq!(format_number(f64::INFINITY), "inf");
        for x in [1.0 / 3.0, 0.1 + 0.2, 123456.789, 9.87654321e-9] {
            assert_eq!(format_number(x).parse::<f64>().unwrap(), x);
        }
    }
}
