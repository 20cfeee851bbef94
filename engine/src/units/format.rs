//! Printing values with an SI prefix and a chosen number of significant digits
//! (`4.7 kΩ`, `48 kHz`, `10 V/µs`), and fractions as percentages (`0.07 %`).

use super::Quantity;

/// Format with an SI prefix and three significant digits, e.g. "4.7 kΩ".
pub fn format(value: f64, q: Quantity) -> String {
    format_sig(value, q, 3)
}

/// Format with an SI prefix and `sig` significant digits (1 to 17), trailing zeros removed.
/// Ratios print as plain numbers and temperatures as plain kelvin; values beyond the
/// f…T prefixes use an exponent ("1e20 V"). Non-finite values print as "—".
pub fn format_sig(value: f64, q: Quantity, sig: usize) -> String {
    if !value.is_finite() {
        return "—".to_string();
    }
    let sig = sig.clamp(1, 17);
    // Slew rates read in V/µs, the way amplifier figures are quoted (common practice).
    if q == Quantity::SlewRate {
        return format!("{} V/µs", format_sig(value * 1e-6, Quantity::Ratio, sig));
    }
    let (number, prefix) = if value == 0.0 {
        ("0".to_string(), "")
    } else {
        let (digits, exp) = sci_digits(value.abs(), sig);
        let (body, prefix) = match q {
            Quantity::Ratio | Quantity::Temperature => (plain_number(&digits, exp), ""),
            _ => si_number(&digits, exp),
        };
        let sign = if value < 0.0 { "-" } else { "" };
        (format!("{sign}{body}"), prefix)
    };
    let unit = q.unit_symbol();
    if unit.is_empty() && prefix.is_empty() {
        number
    } else {
        format!("{number} {prefix}{unit}")
    }
}

/// A fraction as a percentage with three significant digits, e.g. 0.0007 → "0.07 %"
/// (the SI Brochure's space before the unit; non-finite fractions print as "— %").
pub fn format_percent(fraction: f64) -> String {
    format_percent_sig(fraction, 3)
}

/// A fraction as a percentage with `sig` significant digits (1 to 17), trailing zeros removed.
pub fn format_percent_sig(fraction: f64, sig: usize) -> String {
    format!("{} %", format_sig(100.0 * fraction, Quantity::Ratio, sig))
}

/// Prefixes formatting may choose, indexed by (exponent / 3 + 5).
const FORMAT_PREFIXES: [&str; 10] = ["f", "p", "n", "µ", "m", "", "k", "M", "G", "T"];

/// Significant digits (ASCII, exactly `sig` of them) and decimal exponent of `mag` > 0,
/// rounded by the standard library so that 999.96 becomes "100", exponent 3.
fn sci_digits(mag: f64, sig: usize) -> (String, i32) {
    let text = format!("{:.*e}", sig.saturating_sub(1), mag);
    let (mantissa, exp) = text.split_once('e').unwrap_or((text.as_str(), "0"));
    let digits: String = mantissa.chars().filter(char::is_ascii_digit).collect();
    (digits, exp.parse().unwrap_or(0))
}

/// Join integer and fraction digits, dropping trailing zeros of the fraction.
fn join_number(int: &str, frac: &str) -> String {
    let frac = frac.trim_end_matches('0');
    let int = if int.is_empty() { "0" } else { int };
    if frac.is_empty() {
        int.to_string()
    } else {
        format!("{int}.{frac}")
    }
}

/// Digits with the decimal point after `n` of them, padding with zeros as needed.
fn place_point(digits: &str, n: usize) -> String {
    if digits.len() >= n {
        join_number(digits.get(..n).unwrap_or(""), digits.get(n..).unwrap_or(""))
    } else {
        format!("{digits}{}", "0".repeat(n - digits.len()))
    }
}

fn scientific(digits: &str, exp: i32) -> String {
    format!("{}e{}", place_point(digits, 1), exp)
}

fn si_number(digits: &str, exp: i32) -> (String, &'static str) {
    let group = exp.div_euclid(3);
    let index = group + 5;
    match usize::try_from(index).ok().and_then(|i| FORMAT_PREFIXES.get(i)) {
        Some(prefix) => {
            let lead = (exp - group * 3) as usize + 1; // 1..=3 digits before the point
            (place_point(digits, lead), *prefix)
        }
        None => (scientific(digits, exp), ""),
    }
}

fn plain_number(digits: &str, exp: i32) -> String {
    if (0..=6).contains(&exp) {
        place_point(digits, exp as usize + 1)
    } else if (-5..0).contains(&exp) {
        let zeros = "0".repeat((-exp - 1) as usize);
        join_number("0", &format!("{zeros}{digits}"))
    } else {
        scientific(digits, exp)
    }
}
