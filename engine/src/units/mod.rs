//! Physical quantities and the text engineers type for them.
//!
//! [`parse`] turns text such as `4.7k`, `4k7`, `100 nF`, `-250 mV`, `10 V/µs` or
//! `15 nV/√Hz` into a value in SI base units, checked against the plausible range of the
//! expected [`Quantity`]. [`parse_number`] applies the same checks to a bare number (for
//! JSON input). [`format`] and [`format_sig`] print a value back with an SI prefix, e.g.
//! `4.7 kΩ`, so that `parse(&format(v, q), q)` returns `v` to three significant digits;
//! [`format_percent`] prints a fraction as a percentage (`0.07 %`), the one way every
//! percentage shown is written.
//!
//! Conventions:
//! * Prefixes `f p n u µ μ m k K M G T` and SPICE-style `meg`/`MEG`; `m` is milli and
//!   `M` is mega. A prefix with no unit takes the unit of the expected quantity (`100n`).
//! * RKM code: the prefix letter stands in for the decimal point (`4k7`, `2M2`, `1n5`);
//!   `R` does so for resistance only (`4R7`, `R47`).
//! * `K` alone is kelvin when a temperature is expected and kilo otherwise.
//! * Temperatures are absolute (kelvin); `°C` or `C` adds 273.15. Negative kelvin is
//!   rejected as out of range.
//! * [`Quantity::Ratio`] is dimensionless: a plain number, `%` (1e-2), `ppm` (1e-6) or
//!   `ppb` (1e-9).
//!
//! Nothing here panics, whatever the input; failures come back as [`UnitError`].
//!
//! The module is split by concern: [`Quantity`] and its examples here, [`UnitError`] in
//! `error`, reading in `parse`, printing in `format`.

mod error;
mod format;
mod parse;

pub use error::UnitError;
pub use format::{format, format_percent, format_percent_sig, format_sig};
pub use parse::{parse, parse_number};

/// A physical quantity a value can have. Values are always held in SI base units.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Quantity {
    Voltage,
    Current,
    Resistance,
    Capacitance,
    Inductance,
    Frequency,
    Time,
    SlewRate,
    VoltageNoise,
    CurrentNoise,
    Power,
    Temperature,
    /// Dimensionless (gain, tolerance, fraction).
    Ratio,
}

impl Quantity {
    /// Every quantity, in declaration order.
    pub const ALL: [Quantity; 13] = [
        Quantity::Voltage,
        Quantity::Current,
        Quantity::Resistance,
        Quantity::Capacitance,
        Quantity::Inductance,
        Quantity::Frequency,
        Quantity::Time,
        Quantity::SlewRate,
        Quantity::VoltageNoise,
        Quantity::CurrentNoise,
        Quantity::Power,
        Quantity::Temperature,
        Quantity::Ratio,
    ];

    /// The SI unit symbol (empty for a ratio).
    pub fn unit_symbol(self) -> &'static str {
        match self {
            Quantity::Voltage => "V",
            Quantity::Current => "A",
            Quantity::Resistance => "Ω",
            Quantity::Capacitance => "F",
            Quantity::Inductance => "H",
            Quantity::Frequency => "Hz",
            Quantity::Time => "s",
            Quantity::SlewRate => "V/s",
            Quantity::VoltageNoise => "V/√Hz",
            Quantity::CurrentNoise => "A/√Hz",
            Quantity::Power => "W",
            Quantity::Temperature => "K",
            Quantity::Ratio => "",
        }
    }

    /// Lower-case name for messages, e.g. "slew rate".
    pub fn name(self) -> &'static str {
        match self {
            Quantity::Voltage => "voltage",
            Quantity::Current => "current",
            Quantity::Resistance => "resistance",
            Quantity::Capacitance => "capacitance",
            Quantity::Inductance => "inductance",
            Quantity::Frequency => "frequency",
            Quantity::Time => "time",
            Quantity::SlewRate => "slew rate",
            Quantity::VoltageNoise => "voltage noise density",
            Quantity::CurrentNoise => "current noise density",
            Quantity::Power => "power",
            Quantity::Temperature => "temperature",
            Quantity::Ratio => "ratio",
        }
    }

    /// Inclusive bounds on the magnitude of a plausible value, in SI base units.
    /// Zero is always accepted. Temperature is absolute and must not be negative.
    pub fn plausible_range(self) -> (f64, f64) {
        match self {
            Quantity::Voltage => (1e-9, 1e4),
            Quantity::Current => (1e-15, 10.0),
            Quantity::Resistance => (1e-3, 1e13),
            Quantity::Capacitance => (1e-15, 1.0),
            Quantity::Inductance => (1e-12, 1e3),
            Quantity::Frequency => (1e-3, 1e10),
            Quantity::Time => (1e-12, 1e6),
            Quantity::SlewRate => (1.0, 1e11),
            Quantity::VoltageNoise => (1e-12, 1e-3),
            Quantity::CurrentNoise => (1e-18, 1e-6),
            Quantity::Power => (1e-9, 1e4),
            Quantity::Temperature => (1.0, 1000.0),
            Quantity::Ratio => (0.0, 1e6),
        }
    }
}

pub(crate) fn examples(q: Quantity) -> (&'static str, &'static str) {
    match q {
        Quantity::Voltage => ("3.3 V", "250 mV"),
        Quantity::Current => ("10 mA", "2.5 µA"),
        Quantity::Resistance => ("4.7 kΩ", "4k7"),
        Quantity::Capacitance => ("100 nF", "1n5"),
        Quantity::Inductance => ("10 µH", "2.2 mH"),
        Quantity::Frequency => ("48 kHz", "10 Hz"),
        Quantity::Time => ("1 ms", "10 µs"),
        Quantity::SlewRate => ("10 V/µs", "0.5 V/µs"),
        Quantity::VoltageNoise => ("15 nV/√Hz", "15 nV/rtHz"),
        Quantity::CurrentNoise => ("1 pA/√Hz", "1 pA/rtHz"),
        Quantity::Power => ("250 mW", "1 W"),
        Quantity::Temperature => ("300 K", "27 °C"),
        Quantity::Ratio => ("5 %", "100 ppm"),
    }
}

pub(crate) fn with_article(q: Quantity) -> String {
    let name = q.name();
    let article = if name.starts_with(['a', 'e', 'i', 'o', 'u']) { "an" } else { "a" };
    format!("{article} {name}")
}

pub(crate) fn describe(q: Quantity) -> String {
    format!("{} such as {}", with_article(q), examples(q).0)
}
