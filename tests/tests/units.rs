//! Tests for `rangefit_engine::units`: parsing, formatting, errors and round trips.
//! Each table row or group names where its expected value comes from.

use rangefit_engine::units::{self, Quantity, UnitError};
use Quantity::*;

/// Parse `input` as `q` and compare with `expected` (SI base units) to 1e-12 relative.
fn check(input: &str, q: Quantity, expected: f64) {
    match units::parse(input, q) {
        Ok(v) => {
            let tol = 1e-12 * expected.abs().max(f64::MIN_POSITIVE);
            assert!((v - expected).abs() <= tol, "parse({input:?}, {q:?}) = {v}, expected {expected}");
        }
        Err(e) => panic!("parse({input:?}, {q:?}) failed: {e}"),
    }
}

/// Format `value` as `q` with the default three significant digits.
fn check_fmt(value: f64, q: Quantity, expected: &str) {
    assert_eq!(units::format(value, q), expected, "format({value}, {q:?})");
}

/// Parse must fail; `matches` inspects the error, and the message must contain `words`.
fn check_err(input: &str, q: Quantity, matches: fn(&UnitError) -> bool, words: &[&str]) {
    match units::parse(input, q) {
        Ok(v) => panic!("parse({input:?}, {q:?}) = {v}, expected an error"),
        Err(e) => {
            assert!(matches(&e), "parse({input:?}, {q:?}) gave {e:?}");
            let msg = e.to_string();
            for w in words {
                assert!(msg.contains(w), "message {msg:?} for {input:?} lacks {w:?}");
            }
        }
    }
}

#[test]
fn parse_si_prefixes() {
    // SI Brochure, 9th ed. (2019), Table 7 (decimal prefixes); "u" for micro is common practice.
    let rows: &[(&str, Quantity, f64)] = &[
        ("1 fF", Capacitance, 1e-15),
        ("100 pF", Capacitance, 100e-12),
        ("100n", Capacitance, 100e-9),
        ("0.1 µF", Capacitance, 0.1e-6), // U+00B5 micro sign
        ("0.1 μF", Capacitance, 0.1e-6), // U+03BC Greek mu
        ("0.1uF", Capacitance, 0.1e-6),
        ("1 ms", Time, 1e-3),
        ("250 mW", Power, 0.25),
        ("-250 mV", Voltage, -0.25),
        ("48 kHz", Frequency, 48e3),
        ("4.7k", Resistance, 4700.0),
        ("4.7 kΩ", Resistance, 4700.0),
        ("1 MΩ", Resistance, 1e6),
        ("2.4 GHz", Frequency, 2.4e9),
        ("1 TΩ", Resistance, 1e12),
        ("3 m", Voltage, 3e-3), // prefix alone: unit implied by the expected quantity
        ("100n", Ratio, 100e-9),
    ];
    for &(input, q, v) in rows {
        check(input, q, v);
    }
}

#[test]
fn parse_common_spellings() {
    // common practice: what engineers type in schematics, datasheets and SPICE decks.
    let rows: &[(&str, Quantity, f64)] = &[
        ("4.7kohm", Resistance, 4700.0),
        ("4.7 kohms", Resistance, 4700.0),
        ("4.7KΩ", Resistance, 4700.0),         // upper-case K for kilo
        ("4.7 k\u{2126}", Resistance, 4700.0), // U+2126 ohm sign
        ("1 megohm", Resistance, 1e6),         // SPICE-style meg
        ("2.2MEG", Resistance, 2.2e6),
        ("1R", Resistance, 1.0),
        ("10 mohm", Resistance, 10e-3), // m is milli, case matters
        ("3.3V", Voltage, 3.3),
        ("+5 V", Voltage, 5.0),
        ("3.3v", Voltage, 3.3),
        ("  3.3 V  ", Voltage, 3.3),
        ("- 5 V", Voltage, -5.0),
        ("1e-6", Capacitance, 1e-6),
        ("1E3", Resistance, 1e3),
        ("2.5e3 Hz", Frequency, 2.5e3),
        (".5 V", Voltage, 0.5),
        ("5. V", Voltage, 5.0),
        ("10 mA", Current, 10e-3),
        ("10 µH", Inductance, 10e-6),
        ("100nf", Capacitance, 100e-9),
        ("0.5 F", Capacitance, 0.5), // a bare unit letter is the unit, not a prefix
        ("1f", Capacitance, 1e-15),  // ...but a lone lower-case f is femto
        ("2 H", Inductance, 2.0),
        ("1 sec", Time, 1.0),
        ("1 MHZ", Frequency, 1e6),
        ("0", Voltage, 0.0),
        ("0 Ω", Resistance, 0.0),
    ];
    for &(input, q, v) in rows {
        check(input, q, v);
    }
}

#[test]
fn parse_rkm_code() {
    // IEC 60062:2016 §5 (RKM code): the multiplier letter takes the place of the decimal point.
    let rows: &[(&str, Quantity, f64)] = &[
        ("4k7", Resistance, 4700.0),
        ("2M2", Resistance, 2.2e6),
        ("4R7", Resistance, 4.7),
        ("R47", Resistance, 0.47),
        ("1K5", Resistance, 1500.0),
        ("1G0", Resistance, 1e9),
        ("1n5", Capacitance, 1.5e-9),
        ("4p7", Capacitance, 4.7e-12),
        ("2µ2", Capacitance, 2.2e-6),
        ("6m8", Inductance, 6.8e-3),
    ];
    for &(input, q, v) in rows {
        check(input, q, v);
    }
    // common practice: an RKM value may carry its unit symbol.
    check("4k7Ω", Resistance, 4700.0);
    check("4R7 Ω", Resistance, 4.7);
    check("1n5F", Capacitance, 1.5e-9);
}

#[test]
fn parse_compound_units() {
    // common practice: slew rate in V/µs, noise density in nV/√Hz and pA/√Hz.
    let rows: &[(&str, Quantity, f64)] = &[
        ("10 V/us", SlewRate, 10e6),
        ("10 V/µs", SlewRate, 10e6),
        ("10 V/μs", SlewRate, 10e6),
        ("0.5 V/ms", SlewRate, 500.0),
        ("1 kV/s", SlewRate, 1e3),
        ("15 nV/√Hz", VoltageNoise, 15e-9),
        ("15 nV/rtHz", VoltageNoise, 15e-9),
        ("15nV/sqrt(Hz)", VoltageNoise, 15e-9),
        ("15 nV / √Hz", VoltageNoise, 15e-9),
        ("1 pA/√Hz", CurrentNoise, 1e-12),
        ("1 fA/rtHz", CurrentNoise, 1e-15),
    ];
    for &(input, q, v) in rows {
        check(input, q, v);
    }
}

#[test]
fn parse_ratio_and_temperature() {
    // common practice: % = 1e-2, ppm = 1e-6 of a dimensionless ratio.
    check("5 %", Ratio, 0.05);
    check("100 ppm", Ratio, 1e-4);
    check("20", Ratio, 20.0);
    // SI Brochure, 9th ed. (2019), §2.3.1: t/°C = T/K − 273.15.
    check("300 K", Temperature, 300.0);
    check("300K", Temperature, 300.0);
    check("27 °C", Temperature, 300.15);
    check("27 C", Temperature, 300.15);
    check("-40 °C", Temperature, 233.15);
    check("27 ℃", Temperature, 300.15);
    // common practice: K means kelvin only where a temperature is expected, kilo elsewhere.
    check("300 K", Resistance, 300e3);
}

#[test]
fn parse_errors() {
    // common practice: every failure is reported, with a message naming the problem.
    check_err("", Resistance, |e| *e == UnitError::Empty, &["empty"]);
    check_err("   ", Voltage, |e| *e == UnitError::Empty, &["empty"]);
    check_err(
        "abc",
        Voltage,
        |e| matches!(e, UnitError::NotANumber { text } if text == "abc"),
        &["'abc'", "not a number"],
    );
    check_err("4.7.1k", Resistance, |e| matches!(e, UnitError::NotANumber { .. }), &["not a number"]);
    check_err("4 7", Resistance, |e| matches!(e, UnitError::NotANumber { .. }), &["not a number"]);
    check_err("4k7kΩ", Resistance, |e| matches!(e, UnitError::NotANumber { .. }), &["not a number"]);
    check_err(
        "4.7 kQ",
        Resistance,
        |e| matches!(e, UnitError::UnknownUnit { unit, expected: Resistance } if unit == "kQ"),
        &["unknown unit 'kQ'", "resistance"],
    );
    check_err(
        "3.3 kHx",
        Voltage,
        |e| matches!(e, UnitError::UnknownUnit { .. }),
        &["unknown unit 'kHx'", "expected a voltage such as 3.3 V or 250 mV"],
    );
    check_err(
        "48 kHz",
        Voltage,
        |e| matches!(e, UnitError::WrongQuantity { unit, found: Frequency, expected: Voltage } if unit == "kHz"),
        &["'kHz' is a frequency unit", "expected a voltage such as 3.3 V"],
    );
    check_err(
        "4R7",
        Voltage,
        |e| matches!(e, UnitError::WrongQuantity { found: Resistance, .. }),
        &["resistance unit"],
    );
    check_err("3 F", Voltage, |e| matches!(e, UnitError::WrongQuantity { found: Capacitance, .. }), &["capacitance"]);
    check_err("5 %", Voltage, |e| matches!(e, UnitError::WrongQuantity { found: Ratio, .. }), &["ratio unit"]);
    check_err("1 ms", Frequency, |e| matches!(e, UnitError::WrongQuantity { found: Time, .. }), &["time unit"]);
    check_err("27 °C", Voltage, |e| matches!(e, UnitError::WrongQuantity { found: Temperature, .. }), &["temperature"]);
    for input in ["NaN", "nan", "inf", "-inf", "Infinity", "1e999", "1e999 V", "-1e400"] {
        check_err(input, Voltage, |e| *e == UnitError::NotFinite, &["not a finite number"]);
    }
    check_err(
        "1e20 V",
        Voltage,
        |e| matches!(e, UnitError::OutOfRange { quantity: Voltage, min, max, .. } if *min == 1e-9 && *max == 1e4),
        &["1e20 V", "outside the plausible range for a voltage", "1 nV", "10 kV"],
    );
    check_err("120 MΩ", Capacitance, |e| matches!(e, UnitError::WrongQuantity { .. }), &["resistance unit"]);
    check_err("1e14", Resistance, |e| matches!(e, UnitError::OutOfRange { .. }), &["100 TΩ", "resistance"]);
    check_err("1 aV", Voltage, |e| matches!(e, UnitError::UnknownUnit { .. }), &["'aV'"]);
    check_err("1e-999 V", Voltage, |e| matches!(e, UnitError::OutOfRange { .. }), &["outside"]);
    // "3 F" is three farads (not femto): beyond the 1 F bound, reported as 3 F.
    check_err("3 F", Capacitance, |e| matches!(e, UnitError::OutOfRange { value, .. } if *value == 3.0), &["3 F"]);
    check_err("-5 K", Temperature, |e| matches!(e, UnitError::OutOfRange { .. }), &["temperature", "1 K", "1000 K"]);
}

#[test]
fn error_message_for_field() {
    // common practice: a field that knows its quantity names it even for empty input.
    assert_eq!(UnitError::Empty.message(Resistance), "value is empty; expected a resistance such as 4.7 kΩ");
    let e = UnitError::NotANumber { text: "abc".into() };
    assert!(e.message(Inductance).contains("an inductance"));
    let e = UnitError::WrongQuantity { unit: "kHz".into(), found: Frequency, expected: Voltage };
    assert_eq!(e.message(Voltage), "'kHz' is a frequency unit; expected a voltage such as 3.3 V");
    // std::error::Error is implemented.
    let boxed: Box<dyn std::error::Error> = Box::new(UnitError::NotFinite);
    assert!(boxed.to_string().contains("finite"));
}

#[test]
fn plausible_ranges() {
    // common practice: bounds on the magnitude; zero always allowed; both bounds inclusive.
    let rows: &[(Quantity, f64, f64)] = &[
        (Voltage, 1e-9, 1e4),
        (Current, 1e-15, 10.0),
        (Resistance, 1e-3, 1e13),
        (Capacitance, 1e-15, 1.0),
        (Inductance, 1e-12, 1e3),
        (Frequency, 1e-3, 1e10),
        (Time, 1e-12, 1e6),
        (SlewRate, 1.0, 1e11),
        (VoltageNoise, 1e-12, 1e-3),
        (CurrentNoise, 1e-18, 1e-6),
        (Power, 1e-9, 1e4),
        (Temperature, 1.0, 1000.0),
        (Ratio, 0.0, 1e6),
    ];
    assert_eq!(rows.len(), Quantity::ALL.len());
    for &(q, min, max) in rows {
        assert_eq!(q.plausible_range(), (min, max), "{q:?}");
        assert_eq!(units::parse_number(0.0, q), Ok(0.0));
        assert_eq!(units::parse_number(min, q), Ok(min));
        assert_eq!(units::parse_number(max, q), Ok(max));
        assert!(matches!(units::parse_number(max * 2.0, q), Err(UnitError::OutOfRange { .. })));
        if min > 0.0 {
            assert!(matches!(units::parse_number(min / 2.0, q), Err(UnitError::OutOfRange { .. })));
        }
        if q != Temperature {
            assert_eq!(units::parse_number(-max, q), Ok(-max));
        }
        assert_eq!(units::parse_number(f64::NAN, q), Err(UnitError::NotFinite));
        assert_eq!(units::parse_number(f64::INFINITY, q), Err(UnitError::NotFinite));
        assert_eq!(units::parse_number(f64::NEG_INFINITY, q), Err(UnitError::NotFinite));
    }
    // common practice: a bound written with another prefix still counts ("1000 pV" = 1 nV).
    check("1000 pV", Voltage, 1e-9);
    check("10 kV", Voltage, 1e4);
}

#[test]
fn quantity_symbols_and_names() {
    // SI Brochure, 9th ed. (2019), Table 4 (derived unit symbols); noise densities common practice.
    let rows: &[(Quantity, &str, &str)] = &[
        (Voltage, "V", "voltage"),
        (Current, "A", "current"),
        (Resistance, "Ω", "resistance"),
        (Capacitance, "F", "capacitance"),
        (Inductance, "H", "inductance"),
        (Frequency, "Hz", "frequency"),
        (Time, "s", "time"),
        (SlewRate, "V/s", "slew rate"),
        (VoltageNoise, "V/√Hz", "voltage noise density"),
        (CurrentNoise, "A/√Hz", "current noise density"),
        (Power, "W", "power"),
        (Temperature, "K", "temperature"),
        (Ratio, "", "ratio"),
    ];
    for &(q, sym, name) in rows {
        assert_eq!(q.unit_symbol(), sym);
        assert_eq!(q.name(), name);
    }
}

#[test]
fn format_values() {
    // SI Brochure, 9th ed. (2019), Table 7 prefixes and §5.4.3 (space between number and unit);
    // three significant digits with trailing zeros dropped is common practice.
    let rows: &[(f64, Quantity, &str)] = &[
        (4700.0, Resistance, "4.7 kΩ"),
        (100e-9, Capacitance, "100 nF"),
        (15.915, Frequency, "15.9 Hz"),
        (-0.25, Voltage, "-250 mV"),
        (3.3, Voltage, "3.3 V"),
        (0.0, Voltage, "0 V"),
        (-0.0, Voltage, "0 V"),
        (1e6, Resistance, "1 MΩ"),
        (0.0025, Voltage, "2.5 mV"),
        (999.96, Resistance, "1 kΩ"),
        (999.4, Resistance, "999 Ω"),
        (1e-15, Capacitance, "1 fF"),
        (4.7e-12, Capacitance, "4.7 pF"),
        (2.2e-6, Capacitance, "2.2 µF"),
        (1e12, Resistance, "1 TΩ"),
        (2.4e9, Frequency, "2.4 GHz"),
        (10e6, SlewRate, "10 V/µs"),
        (15e-9, VoltageNoise, "15 nV/√Hz"),
        (1e-12, CurrentNoise, "1 pA/√Hz"),
        (0.25, Power, "250 mW"),
        (1e-3, Time, "1 ms"),
        (12345.0, Frequency, "12.3 kHz"),
        (1e20, Voltage, "1e20 V"),
        (2.5e-18, CurrentNoise, "2.5e-18 A/√Hz"),
    ];
    for &(v, q, s) in rows {
        check_fmt(v, q, s);
    }
    // common practice: ratio as a plain number, temperature in plain kelvin.
    check_fmt(0.05, Ratio, "0.05");
    check_fmt(1e-4, Ratio, "0.0001");
    check_fmt(1e6, Ratio, "1000000");
    check_fmt(0.0, Ratio, "0");
    check_fmt(1.5e-7, Ratio, "1.5e-7");
    check_fmt(300.0, Temperature, "300 K");
    check_fmt(300.15, Temperature, "300 K");
    check_fmt(1000.0, Temperature, "1000 K");
    // common practice: non-finite values show a dash.
    check_fmt(f64::NAN, Voltage, "—");
    check_fmt(f64::INFINITY, Ratio, "—");
}

#[test]
fn format_significant_digits() {
    // common practice: chosen significant digits, rounding carried into the next prefix.
    let rows: &[(f64, Quantity, usize, &str)] = &[
        (4712.0, Resistance, 2, "4.7 kΩ"),
        (4712.0, Resistance, 4, "4.712 kΩ"),
        (4712.0, Resistance, 1, "5 kΩ"),
        (15.91549, Frequency, 5, "15.915 Hz"),
        (999.96, Voltage, 5, "999.96 V"),
        (999.96, Voltage, 4, "1 kV"),
        (123.0, Voltage, 1, "100 V"),
        (0.0, Voltage, 0, "0 V"),
        (4.7, Voltage, 0, "5 V"), // 0 digits is treated as 1
        (300.15, Temperature, 5, "300.15 K"),
        (1.0 / 3.0, Ratio, 40, "0.33333333333333331"), // capped at 17 digits
    ];
    for &(v, q, sig, s) in rows {
        assert_eq!(units::format_sig(v, q, sig), s, "format_sig({v}, {q:?}, {sig})");
    }
}

/// Deterministic 64-bit linear congruential generator (Knuth's MMIX constants, from memory).
struct Lcg(u64);

impl Lcg {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
        self.0 >> 11
    }
    /// Uniform in [0, 1).
    fn unit(&mut self) -> f64 {
        self.next() as f64 / (1u64 << 53) as f64
    }
}

#[test]
fn format_then_parse_round_trips() {
    // common practice: what we print must read back to within its significant digits.
    let mut rng = Lcg(0x5EED_0001);
    let mut checked = 0;
    for q in Quantity::ALL {
        let (min, max) = q.plausible_range();
        let lo = if min > 0.0 { min.log10() } else { -6.0 };
        let hi = max.log10();
        for i in 0..400 {
            let mag = 10f64.powf(lo + (hi - lo) * rng.unit()).clamp(min, max);
            let v = if q != Temperature && i % 3 == 0 { -mag } else { mag };
            for sig in [3, 4, 6] {
                let text = units::format_sig(v, q, sig);
                let back =
                    units::parse(&text, q).unwrap_or_else(|e| panic!("{v} {q:?} -> {text:?} did not parse: {e}"));
                let tol = 0.5 * 10f64.powi(1 - sig as i32) * v.abs();
                assert!((back - v).abs() <= tol, "{v} {q:?} -> {text:?} -> {back}");
                checked += 1;
            }
        }
        // The bounds themselves and zero round-trip exactly.
        for v in [0.0, min, max] {
            assert_eq!(units::parse(&units::format(v, q), q), Ok(v), "{q:?} {v}");
        }
    }
    assert_eq!(checked, 13 * 400 * 3);
}

#[test]
fn never_panics_on_odd_input() {
    // common practice: arbitrary text must produce a value or an error, never a panic.
    let alphabet: Vec<char> =
        "0123456789.+-eE kKmMunpfRΩ\u{2126}µμ°C%/√()VAHzsWrtqgx ∞\u{2212}\u{a0}".chars().collect();
    let mut rng = Lcg(42);
    for _ in 0..20_000 {
        let len = (rng.next() % 12) as usize;
        let text: String = (0..len).map(|_| alphabet[(rng.next() % alphabet.len() as u64) as usize]).collect();
        for q in Quantity::ALL {
            if let Err(e) = units::parse(&text, q) {
                let _ = e.to_string();
                let _ = e.message(q);
            }
        }
    }
    for v in [f64::MIN, f64::MAX, f64::MIN_POSITIVE, 5e-324, -5e-324, 1e300, -1e-300] {
        for q in Quantity::ALL {
            for sig in [0, 1, 3, 17, 100, usize::MAX] {
                let _ = units::format_sig(v, q, sig);
            }
        }
    }
    let long = "9".repeat(5000);
    assert_eq!(units::parse(&long, Ratio), Err(UnitError::NotFinite));
    assert!(units::parse(&format!("1e{long}"), Voltage).is_err());
    assert!(units::parse(&format!("1e-{long}"), Voltage).is_err());
}
