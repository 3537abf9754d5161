//! Complements of decimal inputs (1 − accuracy, 1 − confidence) and percentages as
//! fractions.
//!
//! Logs and options give accuracies and confidences as decimals ("0.9", "0.95"), and
//! binary floating point cannot hold them exactly: 1.0 − 0.9 is 0.09999999999999998
//! and 1.0 − 0.95 is 0.050000000000000044, values every output would then carry. The
//! error rate the user means is the decimal complement, 0.1 or 0.05, and its nearest
//! f64 is what [`complement`] returns: it takes the shortest decimal that reads back
//! as the input (the digits the user wrote, for any value written with up to 15
//! significant digits), subtracts it from 1 exactly, and rounds once. The result
//! differs from `1.0 − x` by at most 2⁻⁵² times the larger of x and 1 − x (the
//! property test below): the two differ only by how x's own rounding is undone.
//!
//! The fast path divides two integers that f64 holds exactly, which IEEE 754 rounds
//! correctly (W. D. Clinger, "How to read floating point numbers accurately", PLDI
//! 1990, the exact case); other values go through Rust's correctly rounded parser.

/// `1 − x` computed from the shortest decimal of `x`, for x in [0, 1]; other values
/// (and NaN) give `1.0 − x`.
pub fn complement(x: f64) -> f64 {
    // 0, 1, values outside [0, 1] and NaN need no digits.
    if !(x > 0.0 && x < 1.0) {
        return 1.0 - x;
    }
    let Some((digits, places)) = shortest_decimal(x) else {
        return 1.0 - x;
    };
    // x = digits / 10^places exactly, with 0 < x < 1, so digits < 10^places.
    if places > 38 {
        // x < 1e-21: 1 − x rounds to 1 however it is computed.
        return 1.0 - x;
    }
    let rest = 10u128.pow(places) - digits;
    correctly_rounded(rest, places).unwrap_or(1.0 - x)
}

/// `x / 100` for a percentage, from the shortest decimal of `x`, rounded once: 7.2 %
/// gives 0.072 (the f64 division gives 0.07200000000000001). Non-finite and negative
/// values give `x / 100.0`.
pub fn percent_to_fraction(x: f64) -> f64 {
    if !x.is_finite() || x <= 0.0 {
        return x / 100.0;
    }
    let Some((digits, places)) = shortest_decimal(x) else {
        return x / 100.0;
    };
    correctly_rounded(digits, places + 2).unwrap_or(x / 100.0)
}

/// A rate as a percentage with two decimals, without the sign ("4.20" for 0.042),
/// appended to `out`: `round(rate × 10⁴)` hundredths of a per cent, halves away from
/// zero. Every report and every sentence formats percentages with this one rounding
/// (so a table cell and the sentence beside it never differ), and it costs a few
/// nanoseconds where `format!("{:.2}")` costs a hundred: the explanation of each of a
/// million runs holds several. Negative rates get a minus sign; non-finite ones are
/// written as Rust formats them.
pub fn push_percent(out: &mut String, rate: f64) {
    let hundredths = (rate * 10_000.0).round();
    if !hundredths.is_finite() || hundredths.abs() >= 1e18 {
        out.push_str(&format!("{:.2}", rate * 100.0));
        return;
    }
    if hundredths < 0.0 {
        out.push('-');
    }
    let hundredths = hundredths.abs() as u64;
    let mut digits = itoa::Buffer::new();
    out.push_str(digits.format(hundredths / 100));
    out.push('.');
    let fraction = (hundredths % 100) as u8;
    out.push(char::from(b'0' + fraction / 10));
    out.push(char::from(b'0' + fraction % 10));
}

/// 1234567 → "1,234,567".
pub fn group_thousands(value: u64) -> String {
    let digits = value.to_string();
    let mut grouped = String::with_capacity(digits.len() + digits.len() / 3);
    for (index, ch) in digits.chars().enumerate() {
        if index > 0 && (digits.len() - index) % 3 == 0 {
            grouped.push(',');
        }
        grouped.push(ch);
    }
    grouped
}

/// The shortest decimal that reads back as `x` (finite, x ≥ 0), as `(D, n)` with
/// x = D / 10^n, the digits a shortest round-trip formatter prints.
///
/// Fast path, for the usual few digits: the fewest places n ≤ 10 for which an
/// integer D < 10^15 gives D / 10^n == x. The division is correctly rounded (both
/// are exact in f64), so this is the round-trip test itself; below 10^15 at most one
/// D per n can pass (neighbouring 15-digit decimals are further apart than f64
/// spacing), so the result is the formatter's. That D is the rounded x·10^n: x is
/// within 2⁻⁵³·x of D/10^n, so x·10^n (itself rounded) is within 2·2⁻⁵³·10¹⁵ < 0.25
/// of D. Anything longer is formatted (zmij, the shortest round-trip digits) and
/// parsed.
fn shortest_decimal(x: f64) -> Option<(u128, u32)> {
    // Up to 10 places: hand-written accuracies and confidences have a few digits, and
    // for computed values (16–17 digits) the formatter is quicker than more steps.
    for (places, &scale) in (0u32..).zip(&POWERS_OF_TEN[..=10]) {
        let scaled = x * scale;
        if scaled >= 1e15 {
            break;
        }
        let digits = scaled.round();
        if digits / scale == x {
            return Some((digits as u64 as u128, places));
        }
    }
    let mut buffer = zmij::Buffer::new();
    decimal_digits(buffer.format_finite(x))
}

/// 10⁰ … 10²², every power of ten that f64 holds exactly.
const POWERS_OF_TEN: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
    1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
];

/// The f64 nearest to `digits / 10^places`.
fn correctly_rounded(digits: u128, places: u32) -> Option<f64> {
    // Both integers exact in f64 (below 2^53 and 10^22): one correctly rounded division.
    if digits < (1 << 53) && places <= 22 {
        return Some(digits as u64 as f64 / POWERS_OF_TEN[places as usize]);
    }
    if places > 38 {
        return None;
    }
    let text = format!("{digits:0>width$}", width = places as usize + 1);
    let (whole, fraction) = text.split_at(text.len() - places as usize);
    format!("{whole}.{fraction}").parse().ok()
}

/// `(D, n)` with the decimal `text` = D / 10^n, from a plain ("0.0585", "100.0") or
/// scientific ("5.85e-2", "1e-7", "1e22") number without sign; None for anything
/// else or more than 19 significant digits.
fn decimal_digits(text: &str) -> Option<(u128, u32)> {
    let (mantissa, exponent) = match text.split_once(['e', 'E']) {
        Some((mantissa, exponent)) => (mantissa, exponent.parse::<i32>().ok()?),
        None => (text, 0),
    };
    let (whole, fraction) = mantissa.split_once('.').unwrap_or((mantissa, ""));
    // At most 17 significant digits come from the formatter: u64 holds 19.
    let mut digits: u64 = 0;
    for byte in whole.bytes().chain(fraction.bytes()) {
        if !byte.is_ascii_digit() {
            return None;
        }
        digits = digits
            .checked_mul(10)?
            .checked_add(u64::from(byte - b'0'))?;
    }
    let digits = u128::from(digits);
    let places = i32::try_from(fraction.len()).ok()? - exponent;
    if places < 0 {
        let shift = 10u128.checked_pow(places.unsigned_abs())?;
        return Some((digits.checked_mul(shift)?, 0));
    }
    u32::try_from(places).ok().map(|places| (digits, places))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Test inputs in [0, 1): xorshift64 (G. Marsaglia, "Xorshift RNGs", J. Stat.
    /// Software 8(14), 2003), 53 bits.
    fn uniform(state: &mut u64) -> f64 {
        *state ^= *state << 13;
        *state ^= *state >> 7;
        *state ^= *state << 17;
        (*state >> 11) as f64 / (1u64 << 53) as f64
    }

    #[test]
    fn complements_of_decimals_are_the_decimals_the_user_means() {
        for (x, expected) in [
            ("0.9", "0.1"),
            ("0.95", "0.05"),
            ("0.97", "0.03"),
            ("0.947", "0.053"),
            ("0.9415", "0.0585"),
            ("0.9995", "0.0005"),
            ("0.999999", "0.000001"),
            ("0.5", "0.5"),
            ("0.05", "0.95"),
            ("0.0000001", "0.9999999"),
            ("0.123456789012345", "0.876543210987655"),
        ] {
            let x: f64 = x.parse().unwrap();
            let expected: f64 = expected.parse().unwrap();
            assert_eq!(complement(x), expected, "1 − {x}");
        }
        assert_eq!(complement(0.0), 1.0);
        assert_eq!(complement(1.0), 0.0);
        assert_eq!(complement(1e-30), 1.0);
        assert_eq!(complement(1.5), -0.5);
        assert!(complement(f64::NAN).is_nan());
    }

    #[test]
    fn digits_of_plain_and_scientific_forms() {
        assert_eq!(decimal_digits("0.0585"), Some((585, 4)));
        assert_eq!(decimal_digits("5.85e-2"), Some((585, 4)));
        assert_eq!(decimal_digits("1e-7"), Some((1, 7)));
        assert_eq!(decimal_digits("0.5"), Some((5, 1)));
        assert_eq!(decimal_digits("1e3"), Some((1000, 0)));
        assert_eq!(decimal_digits("100.0"), Some((1000, 1)));
        assert_eq!(decimal_digits("-0.5"), None);
    }

    /// The fast path finds the digits the formatter prints.
    #[test]
    fn shortest_decimal_agrees_with_the_formatter() {
        let mut state = 0xD1B5_4A32_D192_ED03u64;
        for _ in 0..200_000 {
            let x = uniform(&mut state);
            for x in [
                x,
                (x * 1e3).round() / 1e3,
                (x * 1e6).round() / 1e6,
                (x * 1e12).round() / 1e12,
                x * 1e-9,
                x * 100.0,
            ] {
                let mut buffer = zmij::Buffer::new();
                assert_eq!(
                    shortest_decimal(x),
                    decimal_digits(buffer.format_finite(x)).map(|(d, n)| strip_zeros(d, n)),
                    "{x}"
                );
            }
        }
    }

    /// The formatter may print "100.0": the same decimal without trailing zeros.
    fn strip_zeros(mut digits: u128, mut places: u32) -> (u128, u32) {
        while places > 0 && digits % 10 == 0 {
            digits /= 10;
            places -= 1;
        }
        (digits, places)
    }

    #[test]
    fn percentages_become_the_fractions_the_user_means() {
        for (x, expected) in [
            ("7.2", "0.072"),
            ("6.25", "0.0625"),
            ("95", "0.95"),
            ("99.95", "0.9995"),
            ("100", "1"),
            ("0.5", "0.005"),
            ("33.333333333333336", "0.33333333333333336"),
            ("1e-7", "1e-9"),
        ] {
            let x: f64 = x.parse().unwrap();
            let expected: f64 = expected.parse().unwrap();
            assert_eq!(percent_to_fraction(x), expected, "{x} %");
        }
        assert_eq!(percent_to_fraction(0.0), 0.0);
        assert_eq!(percent_to_fraction(-5.0), -0.05);
        // Within an ulp of the binary division everywhere in (0, 100].
        let mut state = 0x9E37_79B9_7F4A_7C15u64;
        for _ in 0..100_000 {
            let x = 100.0 * uniform(&mut state);
            for x in [x, (x * 100.0).round() / 100.0] {
                let ours = percent_to_fraction(x);
                let binary = x / 100.0;
                assert!(
                    (ours - binary).abs() <= f64::EPSILON * binary,
                    "{x} %: {ours} against {binary}"
                );
            }
        }
    }

    /// Within 2⁻⁵²·max(x, 1 − x) of the binary complement, everywhere in (0, 1),
    /// including values with 17 significant digits (the slow path).
    #[test]
    fn complement_stays_next_to_the_binary_one() {
        let mut state = 0x2545_F491_4F6C_DD1Du64;
        for _ in 0..200_000 {
            let x = uniform(&mut state);
            // Also decimals with few digits, the common case.
            let short = (x * 1e4).round() / 1e4;
            for x in [x, short, x * 1e-6] {
                let ours = complement(x);
                let binary = 1.0 - x;
                // x itself is within half an ulp of the decimal; the result adds a
                // rounding of at most half an ulp of its own.
                let ulp = f64::EPSILON * x.max(binary);
                assert!(
                    (ours - binary).abs() <= ulp,
                    "1 − {x}: {ours} against {binary}"
                );
            }
        }
    }
}
