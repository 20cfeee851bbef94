//! Reading the text engineers type (`4k7`, `100 nF`, `27 °C`, `10 V/µs`) and bare numbers
//! into SI values, checked against the plausible range of the expected quantity.

use super::{Quantity, UnitError};

/// Read `text` as a value of quantity `expected`, returned in SI base units.
pub fn parse(text: &str, expected: Quantity) -> Result<f64, UnitError> {
    let s = text.trim();
    if s.is_empty() {
        return Err(UnitError::Empty);
    }
    let not_a_number = || UnitError::NotANumber { text: s.to_string() };
    let sc = scan(s)?;

    let (prefix_exp, unit) = match sc.rkm {
        Some((letter, letter_exp)) => {
            let unit = resolve_after_rkm(letter, &sc.suffix, expected, s)?;
            (letter_exp, unit)
        }
        None => resolve_suffix(&sc.suffix, expected)?,
    };
    if unit.quantity != expected {
        return Err(UnitError::WrongQuantity { unit: sc.suffix, found: unit.quantity, expected });
    }

    let int = if sc.int.is_empty() { "0" } else { sc.int };
    let frac = if sc.frac.is_empty() { "0" } else { sc.frac };
    let exp = sc.exp.saturating_add(i64::from(prefix_exp)).saturating_add(i64::from(unit.exp10));
    let sign = if sc.negative { "-" } else { "" };
    let mut value: f64 = format!("{sign}{int}.{frac}e{exp}").parse().map_err(|_| not_a_number())?;
    if !value.is_finite() {
        return Err(UnitError::NotFinite);
    }
    let nonzero_digits = sc.int.bytes().chain(sc.frac.bytes()).any(|b| b != b'0');
    if unit.celsius {
        value += 273.15;
    } else if value == 0.0 && nonzero_digits {
        // Underflowed to zero: far below any plausible magnitude.
        let (min, max) = expected.plausible_range();
        let tiny = if sc.negative { -f64::MIN_POSITIVE } else { f64::MIN_POSITIVE };
        return Err(UnitError::OutOfRange { value: tiny, quantity: expected, min, max });
    }
    check_range(value, expected)
}

/// Check a bare number (already in SI base units, e.g. from JSON) for `expected`.
pub fn parse_number(value: f64, expected: Quantity) -> Result<f64, UnitError> {
    check_range(value, expected)
}

/// Prefix spellings and their powers of ten; longer spellings first so "meg" beats "m".
const PREFIXES: [(&str, i32); 15] = [
    ("meg", 6),
    ("MEG", 6),
    ("Meg", 6),
    ("f", -15),
    ("p", -12),
    ("n", -9),
    ("u", -6),
    ("µ", -6),
    ("μ", -6),
    ("m", -3),
    ("k", 3),
    ("K", 3),
    ("M", 6),
    ("G", 9),
    ("T", 12),
];

fn check_range(value: f64, q: Quantity) -> Result<f64, UnitError> {
    if !value.is_finite() {
        return Err(UnitError::NotFinite);
    }
    if value == 0.0 {
        return Ok(0.0);
    }
    let (min, max) = q.plausible_range();
    let mag = value.abs();
    // A hair of slack so that e.g. "1000 pV" still counts as 1 nV.
    let inside = mag >= min * (1.0 - 1e-9) && mag <= max * (1.0 + 1e-9);
    let negative_kelvin = q == Quantity::Temperature && value < 0.0;
    if inside && !negative_kelvin {
        Ok(value)
    } else {
        Err(UnitError::OutOfRange { value, quantity: q, min, max })
    }
}

/// The pieces of the numeric part of the input.
struct Scanned<'a> {
    negative: bool,
    int: &'a str,
    frac: &'a str,
    /// Written exponent, clamped to ±1e6 (enough to over- or underflow any f64).
    exp: i64,
    /// RKM letter standing for the decimal point, with its power of ten.
    rkm: Option<(char, i32)>,
    /// Everything after the number, whitespace removed.
    suffix: String,
}

fn rkm_exp(c: char) -> Option<i32> {
    match c {
        'R' => Some(0),
        'f' => Some(-15),
        'p' => Some(-12),
        'n' => Some(-9),
        'u' | 'µ' | 'μ' => Some(-6),
        'm' => Some(-3),
        'k' | 'K' => Some(3),
        'M' => Some(6),
        'G' => Some(9),
        'T' => Some(12),
        _ => None,
    }
}

/// Length in bytes of the run of ASCII digits at the start of `s`.
fn digit_run(s: &str) -> usize {
    s.bytes().take_while(u8::is_ascii_digit).count()
}

fn scan(s: &str) -> Result<Scanned<'_>, UnitError> {
    let not_a_number = || UnitError::NotANumber { text: s.to_string() };
    let mut rest = s;
    let mut negative = false;
    if let Some(c) = rest.chars().next().filter(|c| matches!(c, '+' | '-' | '\u{2212}')) {
        negative = c != '+';
        rest = rest.get(c.len_utf8()..).unwrap_or("").trim_start();
    }
    let lower = fold_case(rest);
    if lower.starts_with("nan") || lower.starts_with("inf") || lower.starts_with('∞') {
        return Err(UnitError::NotFinite);
    }

    let int_len = digit_run(rest);
    let int = rest.get(..int_len).unwrap_or("");
    let mut pos = int_len;
    let mut frac = "";
    let mut rkm = None;
    let after = rest.get(pos..).unwrap_or("");
    let mut chars = after.chars();
    match chars.next() {
        Some('.') => {
            let tail = after.get(1..).unwrap_or("");
            let n = digit_run(tail);
            frac = tail.get(..n).unwrap_or("");
            pos += 1 + n;
        }
        Some(c) if rkm_exp(c).is_some() && chars.next().is_some_and(|d| d.is_ascii_digit()) => {
            let tail = after.get(c.len_utf8()..).unwrap_or("");
            let n = digit_run(tail);
            frac = tail.get(..n).unwrap_or("");
            pos += c.len_utf8() + n;
            rkm = rkm_exp(c).map(|e| (c, e));
        }
        _ => {}
    }
    if int.is_empty() && frac.is_empty() {
        return Err(not_a_number());
    }

    let mut exp: i64 = 0;
    if rkm.is_none() {
        let after = rest.get(pos..).unwrap_or("");
        let bytes = after.as_bytes();
        if matches!(bytes.first(), Some(b'e' | b'E')) {
            let (exp_negative, start) = match bytes.get(1) {
                Some(b'+') => (false, 2),
                Some(b'-') => (true, 2),
                _ => (false, 1),
            };
            let digits = after.get(start..).unwrap_or("");
            let n = digit_run(digits);
            if n > 0 {
                for b in digits.bytes().take(n) {
                    exp = (exp * 10 + i64::from(b - b'0')).min(1_000_000);
                }
                if exp_negative {
                    exp = -exp;
                }
                pos += start + n;
            }
        }
    }

    let suffix: String = rest.get(pos..).unwrap_or("").chars().filter(|c| !c.is_whitespace()).collect();
    if suffix.chars().any(|c| c.is_ascii_digit() || matches!(c, '.' | '+' | '-' | ',')) {
        return Err(not_a_number());
    }
    Ok(Scanned { negative, int, frac, exp, rkm, suffix })
}

/// A recognised unit: its quantity, a power-of-ten scale to SI, and whether it is °C.
#[derive(Clone, Copy)]
struct Unit {
    quantity: Quantity,
    exp10: i32,
    celsius: bool,
}

impl Unit {
    fn of(quantity: Quantity, exp10: i32) -> Unit {
        Unit { quantity, exp10, celsius: false }
    }
}

/// Lower case for matching the words this module knows (`nan`, `inf`, `hz`, `ohms`, `µs`, …):
/// gives the same match as `str::to_lowercase` for every text, without linking the full
/// Unicode case tables into the browser bundle (several KB compressed). Besides ASCII, the
/// only characters whose lower case is a character of those words are the kelvin sign
/// (lower case `k`) and the Greek capital mu (lower case `μ`); every other character keeps
/// a form that matches no word either way.
fn fold_case(s: &str) -> String {
    s.chars()
        .map(|c| match c {
            '\u{212A}' => 'k',
            '\u{039C}' => '\u{03BC}',
            _ => c.to_ascii_lowercase(),
        })
        .collect()
}

/// Look up a unit spelling. `prefixed` says whether a prefix preceded it: a bare "K" is
/// kelvin only when a temperature is expected, "f" is a farad only after a prefix
/// ("100nf"), and °C takes no prefix.
fn lookup_unit(u: &str, expected: Quantity, prefixed: bool) -> Option<Unit> {
    use Quantity::*;
    if let Some((num, den)) = u.split_once('/') {
        let den = fold_case(den);
        let volts = matches!(num, "V" | "v");
        let amps = matches!(num, "A" | "a");
        let root_hz = ["√hz", "√(hz)", "rthz", "rt(hz)", "sqrthz", "sqrt(hz)"].contains(&den.as_str());
        return match (volts, amps) {
            (true, _) if root_hz => Some(Unit::of(VoltageNoise, 0)),
            (_, true) if root_hz => Some(Unit::of(CurrentNoise, 0)),
            (true, _) => match den.as_str() {
                "s" | "sec" => Some(Unit::of(SlewRate, 0)),
                "ms" | "msec" => Some(Unit::of(SlewRate, 3)),
                "us" | "µs" | "μs" | "usec" => Some(Unit::of(SlewRate, 6)),
                "ns" => Some(Unit::of(SlewRate, 9)),
                _ => None,
            },
            _ => None,
        };
    }
    let unit = match u {
        "V" | "v" => Unit::of(Voltage, 0),
        "A" | "a" => Unit::of(Current, 0),
        "Ω" | "\u{2126}" | "R" => Unit::of(Resistance, 0),
        "F" => Unit::of(Capacitance, 0),
        "f" if prefixed => Unit::of(Capacitance, 0),
        "H" | "h" => Unit::of(Inductance, 0),
        "s" | "sec" | "secs" => Unit::of(Time, 0),
        "W" | "w" => Unit::of(Power, 0),
        "K" if prefixed || expected == Temperature => Unit::of(Temperature, 0),
        "°K" => Unit::of(Temperature, 0),
        "°C" | "℃" | "C" | "degC" if !prefixed => Unit { quantity: Temperature, exp10: 0, celsius: true },
        "%" => Unit::of(Ratio, -2),
        "ppm" => Unit::of(Ratio, -6),
        "ppb" => Unit::of(Ratio, -9),
        _ => match fold_case(u).as_str() {
            "volt" | "volts" => Unit::of(Voltage, 0),
            "amp" | "amps" => Unit::of(Current, 0),
            "ohm" | "ohms" => Unit::of(Resistance, 0),
            "hz" => Unit::of(Frequency, 0),
            "watt" | "watts" => Unit::of(Power, 0),
            _ => return None,
        },
    };
    Some(unit)
}

/// Split the text after a plain number into (prefix exponent, unit).
fn resolve_suffix(u: &str, expected: Quantity) -> Result<(i32, Unit), UnitError> {
    if u.is_empty() {
        return Ok((0, Unit::of(expected, 0)));
    }
    if let Some(unit) = lookup_unit(u, expected, false) {
        return Ok((0, unit));
    }
    for (p, p_exp) in PREFIXES {
        if let Some(rest) = u.strip_prefix(p) {
            if rest.is_empty() {
                return Ok((p_exp, Unit::of(expected, 0)));
            }
            if let Some(unit) = lookup_unit(rest, expected, true) {
                return Ok((p_exp, unit));
            }
        }
    }
    Err(UnitError::UnknownUnit { unit: u.to_string(), expected })
}

/// The unit after an RKM number such as "4k7" or "4R7Ω": no second prefix allowed.
fn resolve_after_rkm(letter: char, u: &str, expected: Quantity, text: &str) -> Result<Unit, UnitError> {
    let unit = if u.is_empty() {
        Unit::of(if letter == 'R' { Quantity::Resistance } else { expected }, 0)
    } else if let Some(unit) = lookup_unit(u, expected, letter != 'R') {
        unit
    } else if matches!(resolve_suffix(u, expected), Ok((e, _)) if e != 0) {
        return Err(UnitError::NotANumber { text: text.to_string() });
    } else {
        return Err(UnitError::UnknownUnit { unit: u.to_string(), expected });
    };
    if letter == 'R' && expected != Quantity::Resistance {
        return Err(UnitError::WrongQuantity { unit: "R".to_string(), found: Quantity::Resistance, expected });
    }
    Ok(unit)
}

#[cfg(test)]
mod tests {
    use super::fold_case;

    /// Every character either folds as `to_lowercase` does or, both ways, gives no
    /// character of a known word (so no match can differ). U+0130 is the one character
    /// whose lower case is two characters; the second (a combining dot) is in no word.
    #[test]
    fn fold_case_matches_like_to_lowercase() {
        let in_words = |c: char| c.is_ascii_lowercase() || "√()∞µμ".contains(c);
        for c in (0..=0x10FFFFu32).filter_map(char::from_u32) {
            let full: String = c.to_lowercase().collect();
            let folded = fold_case(c.encode_utf8(&mut [0; 4]));
            if folded != full {
                let f = folded.chars().next().unwrap();
                assert!(!in_words(f) && !full.chars().all(in_words), "{c:?}: {folded:?} vs {full:?}");
            }
        }
        assert_eq!(fold_case("1 KΩ V/ΜS NaN"), "1 kΩ v/μs nan");
    }
}
