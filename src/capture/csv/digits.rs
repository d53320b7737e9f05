//! Plain decimals read eight bytes at a time (SWAR: "SIMD within a register"): the length of a
//! run of digits from one 8-byte load and a mask, its value from three multiplications, with no
//! branch per digit. It takes a subset of what [`super::decimal`] takes (a sign, at most eight
//! digits before and eight after the point, at most 15 in all, no exponent) and gives the same
//! bits for it: the same integer mantissa, turned into an `f64` by the same one division by an
//! exact power of ten. Anything else is `None`, and the caller reads it the usual way.

use super::POW10;

const ONES: u64 = 0x0101_0101_0101_0101;

/// Powers of ten up to 10^8, as integers.
const POW10_INT: [u64; 9] = [
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

/// The eight bytes from `at` (zeros past the end of `s`), the first in the lowest byte.
#[inline(always)]
fn load8(s: &[u8], at: usize) -> u64 {
    match s.get(at..at + 8) {
        Some(b) => u64::from_le_bytes(b.try_into().unwrap_or([0; 8])),
        None => {
            let mut w = [0u8; 8];
            let tail = s.get(at..).unwrap_or(&[]);
            w[..tail.len()].copy_from_slice(tail);
            u64::from_le_bytes(w)
        }
    }
}

/// How many of the eight bytes of `x`, from the first, are ASCII digits (0 to 8), and the bytes
/// with `'0'` taken off (a digit's byte then holds its value).
#[inline(always)]
fn digit_run(x: u64) -> (u32, u64) {
    let t = x ^ (ONES * u64::from(b'0'));
    (not_digits(t).trailing_zeros() / 8, t)
}

/// The top bit of each byte of `t` (bytes with `'0'` taken off) that is not a digit; past the
/// first such byte the marks may be wrong.
#[inline(always)]
fn not_digits(t: u64) -> u64 {
    // A byte above 9 gets its top bit set by adding 0x76; a byte with the top bit already set is
    // caught by `| t`. A carry out of a non-digit byte can only disturb the bytes after it.
    (t.wrapping_add(ONES * 0x76) | t) & (ONES * 0x80)
}

/// The value of the first `n` (0 to 8) digits held in `t` (as [`digit_run`] gives them).
#[inline(always)]
fn value_of(t: u64, n: u32) -> u64 {
    // Shifted so that the digits fill the top bytes, behind leading zeros (the rest falls off).
    let v = t.checked_shl(8 * (8 - n)).unwrap_or(0);
    let v = v.wrapping_mul(10).wrapping_add(v >> 8); // pairs of digits
    (v & 0x0000_00FF_0000_00FF)
        .wrapping_mul(100 + (1_000_000 << 32))
        .wrapping_add(((v >> 16) & 0x0000_00FF_0000_00FF).wrapping_mul(1 + (10_000 << 32)))
        >> 32
}

/// The unsigned decimal at `s[at]` when its digits and its point all lie in `word` (the eight
/// bytes from there, `int_len` digits then the point, as [`digit_run`] found them) and the
/// byte after its last digit is not a digit: its value and length. The point is taken out by
/// moving the digits after it down one byte, so all of them are read by one [`value_of`]: the
/// same integer mantissa as the two runs' `int·10^k + frac`, divided by the same power of ten.
#[inline(always)]
fn in_one_word(s: &[u8], at: usize, word: u64, int_len: u32, t: u64) -> Option<(f64, usize)> {
    if int_len >= 8 || (word >> (8 * int_len)) as u8 != b'.' {
        return None;
    }
    // the first byte after the point that is not a digit (8: none in this word); the point's
    // own byte sends no carry on (0x2E ^ 0x30 = 0x1E, plus 0x76 stays below 0x100)
    let past_point = not_digits(t) & u64::MAX.checked_shl(8 * int_len + 8).unwrap_or(0);
    let end = past_point.trailing_zeros() / 8;
    if end == 8 && s.get(at + 8).is_some_and(u8::is_ascii_digit) {
        return None; // more digits than the word holds
    }
    let digits = end - 1;
    if digits == 0 {
        return None; // a point alone
    }
    let below = (1u64 << (8 * int_len)) - 1;
    let joined = (t & below) | ((t >> 8) & !below);
    let frac_len = end - 1 - int_len;
    let x = value_of(joined, digits) as i64 as f64;
    let x = if frac_len > 0 {
        x / POW10[(frac_len & 7) as usize] // frac_len < 8: the mask only spares a bounds check
    } else {
        x
    };
    Some((x, end as usize))
}

/// The plain decimal starting at `s[at]`, and the offset of the first byte after it; `None` for
/// anything outside the subset in the module note (the byte after it is not looked at).
#[inline]
pub(super) fn plain_decimal(s: &[u8], at: usize) -> Option<(f64, usize)> {
    let first = *s.get(at)?;
    let neg = first == b'-';
    let int_at = at + usize::from(neg || first == b'+');
    let word = load8(s, int_at);
    let (int_len, int_digits) = digit_run(word);
    if let Some((x, len)) = in_one_word(s, int_at, word, int_len, int_digits) {
        return Some((if neg { -x } else { x }, int_at + len));
    }
    let mut end = int_at + int_len as usize;
    let (frac_len, frac_digits) = if s.get(end) == Some(&b'.') {
        let (n, d) = digit_run(load8(s, end + 1));
        end += 1 + n as usize;
        (n, d)
    } else {
        (0, 0)
    };
    let digits = int_len + frac_len;
    // eight digits in a row may be the start of more: left to the usual reader
    if digits == 0 || digits > 15 || int_len == 8 || frac_len == 8 {
        return None;
    }
    let m = value_of(int_digits, int_len) * POW10_INT[frac_len as usize]
        + value_of(frac_digits, frac_len);
    // m < 10^15: exact, and one instruction as a signed integer (an unsigned one takes several)
    let x = m as i64 as f64;
    let x = if frac_len > 0 {
        x / POW10[frac_len as usize]
    } else {
        x
    };
    Some((if neg { -x } else { x }, end))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::capture::csv::decimal;
    use proptest::prelude::*;

    #[test]
    fn reads_plain_decimals_and_leaves_the_rest() {
        for (s, x, end) in [
            (&b"340.49,1"[..], 340.49, 6),
            (b"-0.000001\n", -1e-6, 9),
            (b"+2", 2.0, 2),
            (b".5;", 0.5, 2),
            (b"5.", 5.0, 2),
            (b"1234567.1234567", 1234567.1234567, 15),
            (b"0", 0.0, 1),
            // the whole number in the first word, with what ends it inside or just past it
            (b"0.000001,", 1e-6, 8),
            (b"-152.85\n", -152.85, 7),
            (b"1234567.", 1234567.0, 8),
            (b"123456.7", 123456.7, 8),
            (b".1234567", 0.1234567, 8),
        ] {
            assert_eq!(plain_decimal(s, 0), Some((x, end)), "{}", s.escape_ascii());
        }
        assert_eq!(
            plain_decimal(b"-0", 0).map(|(x, _)| x.to_bits()),
            Some((-0.0f64).to_bits())
        );
        // each of these is left to the usual reader
        for s in [
            &b""[..],
            b"-",
            b".",
            b",1",
            b" 1",
            b"12345678",
            b"0.12345678",
            b"12345678.5",
            b"1234567.12345678",
        ] {
            assert_eq!(plain_decimal(s, 0), None, "{}", s.escape_ascii());
        }
        // starts inside a longer slice, and stops at its end
        assert_eq!(plain_decimal(b"1,2.25", 2), Some((2.25, 6)));
    }

    proptest! {
        /// Whatever it takes (and is not followed by an exponent, which the caller refuses as
        /// the end of a cell), it reads to the bit as `decimal` does (itself checked against
        /// fast_float2), ending at the same byte.
        #[test]
        fn gives_the_bits_decimal_gives(
            s in r"[+-]?[0-9]{0,9}(\.[0-9]{0,9})?([eE,;\n x][0-9]{0,3})?",
            pad in 0usize..3,
        ) {
            let text = format!("{}{s}", ",".repeat(pad));
            let after = |end: usize| text.as_bytes().get(end).copied();
            if let Some((x, end)) = plain_decimal(text.as_bytes(), pad)
                && !matches!(after(end), Some(b'e' | b'E'))
            {
                let (y, n) = decimal(&text.as_bytes()[pad..]).expect("decimal takes it too");
                prop_assert_eq!(x.to_bits(), y.to_bits());
                prop_assert_eq!(end, pad + n);
            }
        }
    }
}
