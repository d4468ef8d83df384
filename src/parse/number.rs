//! Number fields: fast path through `fast-float2`, slow path for Fortran forms.
//!
//! Accepted: ordinary decimal and exponent forms (`1`, `-2.5`, `.5`, `1e-3`, `+4.`);
//! `nan`, `inf`, `infinity` in any case and with a sign; Fortran `D`/`d` exponents
//! (`1.5D+03`) and the letter-less exponent Fortran prints for three-digit exponents
//! (`1.234-100`, only with a decimal point in the mantissa); fields made only of `*`
//! (Fortran's overflow marker, [`Field::Overflow`]).

/// One parsed field.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Field {
    /// A number (may be non-finite when the text said `nan`/`inf`).
    Value(f64),
    /// A field of `*` only: the writer could not fit the number. Stored as NaN, counted apart.
    Overflow,
    /// Not a number.
    Invalid,
}

/// Parses one field (already trimmed of spaces).
#[inline]
pub fn parse_field(bytes: &[u8]) -> Field {
    match fast_float2::parse::<f64, _>(bytes) {
        Ok(v) => Field::Value(v),
        Err(_) => parse_slow(bytes),
    }
}

/// True when the field reads as a number or an overflow marker.
#[inline]
pub fn is_numeric(bytes: &[u8]) -> bool {
    !matches!(parse_field(bytes), Field::Invalid)
}

#[cold]
fn parse_slow(bytes: &[u8]) -> Field {
    if bytes.is_empty() {
        return Field::Invalid;
    }
    if bytes.iter().all(|&b| b == b'*') {
        return Field::Overflow;
    }
    // Words: nan/inf were taken by the fast path; nothing else numeric starts with a letter.
    if bytes.first().is_some_and(u8::is_ascii_alphabetic) {
        return Field::Invalid;
    }
    const MAX: usize = 64;
    if bytes.len() > MAX {
        return Field::Invalid;
    }
    let mut buf = [0u8; MAX + 1];
    // Fortran D exponent: exactly one d/D, after at least one digit.
    if let Some(pos) = bytes.iter().position(|&b| b == b'd' || b == b'D') {
        let (head, tail) = bytes.split_at(pos);
        if head.iter().any(u8::is_ascii_digit)
            && !tail.iter().skip(1).any(|&b| b == b'd' || b == b'D')
        {
            let out = buf.get_mut(..bytes.len());
            if let Some(out) = out {
                out.copy_from_slice(bytes);
                if let Some(c) = out.get_mut(pos) {
                    *c = b'e';
                }
                if let Ok(v) = fast_float2::parse::<f64, _>(&*out) {
                    return Field::Value(v);
                }
            }
        }
        return Field::Invalid;
    }
    // Letter-less exponent: mantissa with '.', then a sign and digits (`1.234-100`).
    let start = usize::from(matches!(bytes.first(), Some(b'+' | b'-')));
    let body = bytes.get(start..).unwrap_or_default();
    if let Some(rel) = body.iter().position(|&b| b == b'+' || b == b'-') {
        let split = start + rel;
        let mantissa = bytes.get(..split).unwrap_or_default();
        let exponent = bytes.get(split + 1..).unwrap_or_default();
        if mantissa.contains(&b'.')
            && !exponent.is_empty()
            && exponent.iter().all(u8::is_ascii_digit)
            && mantissa
                .iter()
                .skip(start)
                .all(|&b| b.is_ascii_digit() || b == b'.')
        {
            let len = bytes.len() + 1;
            if let Some(out) = buf.get_mut(..len) {
                let (m, rest) = out.split_at_mut(split);
                m.copy_from_slice(mantissa);
                if let Some((e, rest)) = rest.split_first_mut() {
                    *e = b'e';
                    let tail = bytes.get(split..).unwrap_or_default();
                    if rest.len() == tail.len() {
                        rest.copy_from_slice(tail);
                        if let Ok(v) = fast_float2::parse::<f64, _>(&*out) {
                            return Field::Value(v);
                        }
                    }
                }
            }
        }
    }
    Field::Invalid
}

#[cfg(test)]
mod tests {
    use super::*;

    fn v(s: &str) -> Option<f64> {
        match parse_field(s.as_bytes()) {
            Field::Value(v) => Some(v),
            _ => None,
        }
    }

    #[test]
    fn ordinary() {
        assert_eq!(v("1"), Some(1.0));
        assert_eq!(v("-2.5"), Some(-2.5));
        assert_eq!(v(".5"), Some(0.5));
        assert_eq!(v("1e-3"), Some(1e-3));
        assert_eq!(v("-1.5E+03"), Some(-1500.0));
        assert_eq!(v("abc"), None);
        assert_eq!(v(""), None);
        assert_eq!(v("1.0.0"), None);
        assert_eq!(v("1-4"), None);
    }

    #[test]
    fn non_finite() {
        assert!(v("nan").is_some_and(f64::is_nan));
        assert!(v("NaN").is_some_and(f64::is_nan));
        assert_eq!(v("inf"), Some(f64::INFINITY));
        assert_eq!(v("-inf"), Some(f64::NEG_INFINITY));
        assert_eq!(v("Infinity"), Some(f64::INFINITY));
        assert_eq!(v("-Infinity"), Some(f64::NEG_INFINITY));
    }

    #[test]
    fn fortran() {
        assert_eq!(v("1.5D+03"), Some(1500.0));
        assert_eq!(v("1.5d-03"), Some(0.0015));
        assert_eq!(v("-2.0D0"), Some(-2.0));
        assert_eq!(v("1.234-100"), Some(1.234e-100));
        assert_eq!(v("-1.5+120"), Some(-1.5e120));
        assert_eq!(v("D5"), None);
        assert_eq!(v("1D5D5"), None);
        assert_eq!(parse_field(b"****"), Field::Overflow);
        assert_eq!(parse_field(b"*"), Field::Overflow);
        assert_eq!(parse_field(b"**1*"), Field::Invalid);
    }
}
