//! Numbers as exported: an optional sign, digits, one decimal mark (point or comma, as the
//! file uses), an optional exponent; quotes and surrounding spaces allowed.

use crate::sniff::DecimalMark;

/// The number in `field`, or `None` when it is not a plain finite number.
pub fn parse_number(field: &str, mark: DecimalMark) -> Option<f64> {
    let s = field.trim();
    let s = s
        .strip_prefix('"')
        .and_then(|x| x.strip_suffix('"'))
        .unwrap_or(s)
        .trim();
    if s.is_empty() || s.len() > 40 {
        return None;
    }
    let (ours, other) = match mark {
        DecimalMark::Point => ('.', ','),
        DecimalMark::Comma => (',', '.'),
    };
    let mut seen_digit = false;
    for (i, c) in s.char_indices() {
        match c {
            '0'..='9' => seen_digit = true,
            '+' | '-' => {
                let prev = s[..i].chars().last();
                if !(i == 0 || matches!(prev, Some('e' | 'E'))) {
                    return None;
                }
            }
            'e' | 'E' if seen_digit => {}
            c if c == ours => {}
            c if c == other => return None,
            _ => return None,
        }
    }
    if !seen_digit {
        return None;
    }
    let v: f64 = if mark == DecimalMark::Comma {
        s.replace(',', ".").parse().ok()?
    } else {
        s.parse().ok()?
    };
    v.is_finite().then_some(v)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn both_decimal_marks_and_exponents_are_read() {
        assert_eq!(parse_number(" -1.5e3 ", DecimalMark::Point), Some(-1500.0));
        assert_eq!(parse_number("\"2,25\"", DecimalMark::Comma), Some(2.25));
        assert_eq!(parse_number("2,25", DecimalMark::Point), None);
        assert_eq!(parse_number("2.25", DecimalMark::Comma), None);
        assert_eq!(parse_number("inf", DecimalMark::Point), None);
        assert_eq!(parse_number("1-2", DecimalMark::Point), None);
        assert_eq!(parse_number("e5", DecimalMark::Point), None);
    }
}
