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

/// Exact powers of ten representable in an f64 (10^0 … 10^22).
const POW10: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
    1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
];

/// Largest integer mantissa converted exactly (2^53).
const MAX_EXACT: u64 = 1 << 53;

/// Fast path for plain decimal fields: `[+-]digits[.digits][(e|E)[+-]digits]`, ended by
/// the end of `s` or a space/tab. Returns the value and the bytes used, or `None` when the
/// field is anything else or the result could not be computed exactly here (the caller then
/// falls back to the general parser).
///
/// Exactness (Clinger's fast path, W. D. Clinger, "How to read floating point numbers
/// accurately", PLDI 1990): when the decimal mantissa `m ≤ 2^53` and the power of ten
/// `|e| ≤ 22`, both `m` and `10^|e|` are exact doubles, so the single IEEE multiplication
/// or division `m·10^e` / `m/10^−e` is the correctly rounded value, the same as any
/// correct parser (`str::parse::<f64>`, fast-float2) returns; tested by a property test.
/// Powers of ten for up to eight digits read at once.
const POW10_U64: [u64; 9] = [
    1,
    10,
    100,
    1_000,
    10_000,
    100_000,
    1_000_000,
    10_000_000,
    100_000_000,
];

/// Reads the run of ASCII digits at `s[*i..]` into `m` (`m = 10·m + d` per digit),
/// advancing `*i`; returns how many digits were read. Eight bytes at a time where the
/// input allows (SWAR: locate the first non-digit byte and convert up to eight digits with
/// three multiplications), byte by byte near the end of `s`. `m` wraps on overflow; the
/// caller rejects more than 19 digits.
#[inline]
fn read_digits(s: &[u8], i: &mut usize, m: &mut u64) -> usize {
    let start = *i;
    while let Some(chunk) = s.get(*i..*i + 8) {
        let mut word = [0u8; 8];
        word.copy_from_slice(chunk);
        let v = u64::from_le_bytes(word);
        let d = v.wrapping_sub(0x3030_3030_3030_3030);
        // High bit of a byte set where that byte is not a digit; borrows and carries only
        // move upwards, so the lowest flagged byte is exact.
        let flags = (d | v.wrapping_add(0x4646_4646_4646_4646) | v) & 0x8080_8080_8080_8080;
        let count = if flags == 0 {
            8
        } else {
            (flags.trailing_zeros() / 8) as usize
        };
        if count == 0 {
            break;
        }
        // Keep the `count` digits, moved to the top (leading zeros below).
        let mut w = d << (8 * (8 - count));
        w = w.wrapping_mul(10).wrapping_add(w >> 8);
        w = ((w & 0x0000_00FF_0000_00FF).wrapping_mul(0x000F_4240_0000_0064))
            .wrapping_add(((w >> 16) & 0x0000_00FF_0000_00FF).wrapping_mul(0x0000_2710_0000_0001))
            >> 32;
        *m = m
            .wrapping_mul(POW10_U64.get(count).copied().unwrap_or(1))
            .wrapping_add(w);
        *i += count;
        if count < 8 {
            return *i - start;
        }
    }
    while let Some(&c) = s.get(*i) {
        let d = c.wrapping_sub(b'0');
        if d > 9 {
            break;
        }
        *m = m.wrapping_mul(10).wrapping_add(u64::from(d));
        *i += 1;
    }
    *i - start
}

/// Fast path for plain decimal fields: `[+-]digits[.digits][(e|E)[+-]digits]`, ended by
/// the end of `s` or a space/tab. Returns the value and the bytes used, or `None` when the
/// field is anything else or the result could not be computed exactly here (the caller then
/// falls back to the general parser).
///
/// Exactness (Clinger's fast path, W. D. Clinger, "How to read floating point numbers
/// accurately", PLDI 1990): when the decimal mantissa `m ≤ 2^53` and the power of ten
/// `|e| ≤ 22`, both `m` and `10^|e|` are exact doubles, so the single IEEE multiplication
/// or division `m·10^e` / `m/10^−e` is the correctly rounded value, the same as any
/// correct parser (`str::parse::<f64>`, fast-float2) returns; tested by a property test.
#[inline]
pub(crate) fn parse_plain(s: &[u8]) -> Option<(f64, usize)> {
    let mut i = 0usize;
    let neg = match s.first() {
        Some(b'-') => {
            i = 1;
            true
        }
        Some(b'+') => {
            i = 1;
            false
        }
        _ => false,
    };
    let mut m: u64 = 0;
    let mut digits = read_digits(s, &mut i, &mut m);
    let mut frac = 0i64;
    if s.get(i) == Some(&b'.') {
        i += 1;
        let f = read_digits(s, &mut i, &mut m);
        frac = f as i64;
        digits += f;
    }
    // At most 19 digits: the mantissa cannot have wrapped.
    if digits == 0 || digits > 19 {
        return None;
    }
    let mut e = 0i64;
    if matches!(s.get(i), Some(b'e' | b'E')) {
        i += 1;
        let eneg = match s.get(i) {
            Some(b'-') => {
                i += 1;
                true
            }
            Some(b'+') => {
                i += 1;
                false
            }
            _ => false,
        };
        let exp_start = i;
        while let Some(&c) = s.get(i) {
            let d = c.wrapping_sub(b'0');
            if d > 9 {
                break;
            }
            e = e * 10 + i64::from(d);
            i += 1;
            if i - exp_start > 4 {
                return None;
            }
        }
        if i == exp_start {
            return None;
        }
        if eneg {
            e = -e;
        }
    }
    if s.get(i).is_some_and(|&c| !super::layout::is_space(c)) {
        return None;
    }
    if m > MAX_EXACT {
        return None;
    }
    let e10 = e - frac;
    let v = if m == 0 {
        0.0
    } else if e10 >= 0 {
        m as f64 * *POW10.get(usize::try_from(e10).ok()?)?
    } else {
        m as f64 / *POW10.get(usize::try_from(-e10).ok()?)?
    };
    Some((if neg { -v } else { v }, i))
}

/// Parses one field (already trimmed of spaces).
#[inline]
pub fn parse_field(bytes: &[u8]) -> Field {
    if let Some((v, n)) = parse_plain(bytes) {
        if n == bytes.len() {
            return Field::Value(v);
        }
    }
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

    /// The fast path agrees bit for bit with the standard library's correctly rounded
    /// parser (Rust `str::parse::<f64>`, the reference) whenever it answers, and the
    /// general path gives the same value for every plain decimal.
    mod plain {
        use super::super::*;
        use proptest::prelude::*;

        fn check(s: &str) {
            let want: f64 = s.parse().unwrap();
            if let Some((got, n)) = parse_plain(s.as_bytes()) {
                assert_eq!(n, s.len(), "{s}");
                assert_eq!(got.to_bits(), want.to_bits(), "{s}");
            }
            match parse_field(s.as_bytes()) {
                Field::Value(v) => assert_eq!(v.to_bits(), want.to_bits(), "{s}"),
                other => panic!("{s}: {other:?}"),
            }
        }

        #[test]
        fn fixed_cases() {
            for s in [
                "0",
                "-0",
                "-0.0",
                "+0.000",
                "1",
                "-2.5",
                ".5",
                "5.",
                "+.5",
                "1e5",
                "1E-5",
                "1.5e+22",
                "9007199254740993",
                "9007199254740992",
                "0.1",
                "0.3",
                "123456789012345678",
                "1234567890123456789012",
                "2.2250738585072014e-308",
                "1.7976931348623157e308",
                "4.9e-324",
                "0.000000000000000000000000001",
                "-12345.678901e-3",
                "1e22",
                "1e23",
                "1e-22",
                "1e-23",
                "00000000000000000000001.5",
            ] {
                check(s);
            }
            assert!(parse_plain(b"1e").is_none());
            assert!(parse_plain(b".").is_none());
            assert!(parse_plain(b"-").is_none());
            assert!(parse_plain(b"1.5D+03").is_none());
            assert!(parse_plain(b"nan").is_none());
            assert_eq!(parse_plain(b"2.5 7"), Some((2.5, 3)));
        }

        proptest! {
            #![proptest_config(ProptestConfig::with_cases(256))]
            #[test]
            fn matches_std(
                neg in any::<bool>(),
                int in "[0-9]{0,12}",
                frac in proptest::option::of("[0-9]{0,12}"),
                exp in proptest::option::of(-30i32..30),
            ) {
                let mut s = String::new();
                if neg { s.push('-'); }
                s.push_str(&int);
                if let Some(f) = &frac { s.push('.'); s.push_str(f); }
                if int.is_empty() && frac.as_deref().is_none_or(str::is_empty) { s.push('7'); }
                if let Some(e) = exp { s.push_str(&format!("e{e}")); }
                check(&s);
            }

            /// 1 to 19 digits, with or without a point, leading zeros, a sign and an
            /// exponent, followed by nothing, a space, a tab or a carriage return.
            #[test]
            fn matches_std_any_digit_count(
                sign in prop_oneof![Just(""), Just("-"), Just("+")],
                zeros in "0{0,3}",
                digits in "[0-9]{1,19}",
                point in proptest::option::of(0usize..20),
                exp in proptest::option::of(-25i32..25),
                after in prop_oneof![Just(""), Just(" 1"), Just("\t1"), Just("\r")],
            ) {
                let mut s = format!("{sign}{zeros}");
                match point {
                    Some(p) => {
                        let p = p.min(digits.len());
                        s.push_str(&digits[..p]);
                        s.push('.');
                        s.push_str(&digits[p..]);
                    }
                    None => s.push_str(&digits),
                }
                if let Some(e) = exp { s.push_str(&format!("e{e}")); }
                check(&s);
                let want: f64 = s.parse().unwrap();
                let text = format!("{s}{after}");
                if let Some((got, n)) = parse_plain(text.as_bytes()) {
                    // A carriage return is not a field end here: the row splitter strips it.
                    prop_assert!(after != "\r");
                    prop_assert_eq!(n, s.len());
                    prop_assert_eq!(got.to_bits(), want.to_bits());
                }
            }

            #[test]
            fn matches_std_on_printed_doubles(bits in any::<u64>(), prec in 0usize..18) {
                let v = f64::from_bits(bits);
                prop_assume!(v.is_finite());
                check(&format!("{v}"));
                check(&format!("{v:.prec$e}"));
                if v.abs() < 1e15 { check(&format!("{v:.prec$}")); }
            }
        }
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
