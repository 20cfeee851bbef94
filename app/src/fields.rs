//! The request as a form: one text per field, keyed by the field's request path
//! (`source.min`, `destination.bits`, `supplies`, …), and the rules that turn those texts
//! into request JSON and back.
//!
//! Nothing here parses a value itself: every physical value is checked with the engine's
//! `units::parse` (its `UnitError::message` is the text shown under the field), the
//! assembled JSON is read by `Request::from_value`, and values loaded from a request are
//! written back with the engine's `units::format_sig`. Kept free of Leptos and the browser
//! so the rules are tested on the host.

use std::collections::BTreeMap;

use rangefit_engine::request::{
    AnalysisOptions, Parts, Request, DEFAULT_BITS, DEFAULT_DESTINATION_IMPEDANCE, DEFAULT_HEADROOM, DEFAULT_INJECTION_LIMIT,
    DEFAULT_INPUT_CAPACITANCE, DEFAULT_MAX_ORDER, DEFAULT_PASSBAND_ERROR_DB,
};
use rangefit_engine::units::{self, Quantity};
use serde_json::{Map, Number, Value};

/// The four steps of the page, in order.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Step {
    Sensor,
    Converter,
    Parts,
    Design,
}

impl Step {
    pub const ALL: [Step; 4] = [Step::Sensor, Step::Converter, Step::Parts, Step::Design];

    /// Stable name used in `data-testid="step-<id>"` and element ids.
    pub fn id(self) -> &'static str {
        match self {
            Step::Sensor => "sensor",
            Step::Converter => "converter",
            Step::Parts => "parts",
            Step::Design => "design",
        }
    }

    pub fn title(self) -> &'static str {
        match self {
            Step::Sensor => "The sensor",
            Step::Converter => "The converter input",
            Step::Parts => "Power and parts",
            Step::Design => "The design",
        }
    }

    pub fn number(self) -> usize {
        Step::ALL.iter().position(|s| *s == self).unwrap_or(0) + 1
    }

    pub fn next(self) -> Option<Step> {
        Step::ALL.get(self.number()).copied()
    }

    pub fn previous(self) -> Option<Step> {
        self.number().checked_sub(2).and_then(|i| Step::ALL.get(i)).copied()
    }
}

/// What a field holds and how its text becomes JSON.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Kind {
    /// A physical value read by `units::parse`; `percent` fields are shown as "5 %".
    Quantity { q: Quantity, percent: bool },
    /// A whole number (bits, Monte Carlo builds, seed); the engine checks its range.
    Whole,
    /// A plain number in a unit the user names (the measurand's values).
    Number,
    Text,
    LongText,
    /// One of a fixed set of values: (value, label).
    Choice(&'static [(&'static str, &'static str)]),
    Flag,
    /// Several voltages separated by commas (the supply rails).
    Rails,
    /// A level the engine reads itself: a plain number, a percentage or decibels
    /// ("0.1 dB", "-40 dB", "1 %"); sent as typed, the engine names what is wrong.
    Level,
}

/// One input of the form.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Field {
    /// Request path, also the `data-testid` suffix.
    pub path: &'static str,
    pub label: &'static str,
    pub kind: Kind,
    pub step: Step,
    /// Heading of the group of fields it sits in.
    pub group: &'static str,
    pub required: bool,
    /// One line under the field: what it means, in plain words.
    pub help: &'static str,
}

impl Field {
    /// The element id of the input (ids must not contain dots for easy CSS).
    pub fn input_id(&self) -> String {
        format!("f-{}", self.path.replace(['.', '_'], "-"))
    }

    pub fn quantity(&self) -> Option<Quantity> {
        match self.kind {
            Kind::Quantity { q, .. } => Some(q),
            Kind::Rails => Some(Quantity::Voltage),
            _ => None,
        }
    }

    /// True for the amplifier's figures, which only count when the user gives them.
    pub fn is_amplifier_figure(&self) -> bool {
        self.path.starts_with("amplifier.")
    }

    /// The field's kind for a sensor of kind `sensor` (the `source.kind` text): the
    /// sensor's extremes are currents for a current loop.
    pub fn kind_for(&self, sensor: &str) -> Kind {
        match (self.path, self.kind) {
            ("source.min" | "source.max", Kind::Quantity { percent, .. }) if sensor == "current_loop" || sensor == "photodiode" => Kind::Quantity { q: Quantity::Current, percent },
            _ => self.kind,
        }
    }

    /// Whether the field applies given the other fields' texts: the amplifier's figures
    /// only when the user gives them, the modulator rate only for an oversampling
    /// converter, the sampling figures only for a sampling one, the filter's settings only
    /// when a filter is wanted. A field that does not apply is hidden and left out of the
    /// request, but its text is kept.
    pub fn applies(&self, text: impl Fn(&str) -> String) -> bool {
        let oversampling = || text("destination.converter") == "oversampling";
        let current_loop = || text("source.kind") == "current_loop";
        match self.path {
            "source.burden_max" | "source.fault_low" | "source.fault_high" => current_loop(),
            "source.capacitance" => matches!(text("source.kind").as_str(), "high_impedance" | "photodiode"),
            "source.coupling" | "source.impedance" | "source.band_low" => !current_loop() && !matches!(text("source.kind").as_str(), "photodiode" | "bridge"),
            "source.dark_current" => text("source.kind") == "photodiode",
            "source.common_mode_min" | "source.common_mode_max" => text("source.kind") == "differential",
            "source.front_end" => matches!(text("source.kind").as_str(), "differential" | "bridge"),
            "source.excitation" | "source.sensitivity" | "source.bridge_resistance" | "source.active_arms" | "source.ratiometric" | "source.zero_balance" => text("source.kind") == "bridge",
            "destination.modulator_rate" => oversampling(),
            "destination.acquisition_time" | "destination.input_capacitance" => !oversampling(),
            "filter.response" => true,
            p if p.starts_with("filter.") => text("filter.response") != "none",
            _ => !self.is_amplifier_figure() || text("amplifier") == AMP_GIVEN,
        }
    }
}

/// Value of the `amplifier` choice: the engine assumes a generic class and states what
/// the amplifier must provide.
pub const AMP_STATE: &str = "state";
/// Value of the `amplifier` choice: the user gives the figures they know.
pub const AMP_GIVEN: &str = "given";

const KINDS: &[(&str, &str)] = &[
    ("single_ended", "Single-ended voltage (one signal wire against ground)"),
    ("differential", "Differential pair (two signal wires riding on a common-mode level)"),
    ("bridge", "Resistive bridge (load cell, strain gauge, pressure die) on its excitation"),
    ("current_loop", "Current loop (4–20 mA or another range), measured across a shunt"),
    ("high_impedance", "High-impedance voltage (MΩ to TΩ: pH or ion electrode, piezo film, bare electret)"),
    ("photodiode", "Photodiode: its photocurrent, into a transimpedance stage"),
];
const FRONT_ENDS: &[(&str, &str)] = &[
    ("auto", "Let Rangefit choose (instrumentation amplifier for a bridge, a gain above 10 or high-impedance legs)"),
    ("difference", "Difference amplifier: one amplifier, the legs see its input resistors"),
    ("instrumentation", "Instrumentation amplifier: two input amplifiers, the legs see only their inputs"),
];
const COUPLINGS: &[(&str, &str)] = &[
    ("dc", "Pass DC: the lowest output maps to the bottom of the converter range, the highest to the top"),
    ("ac", "Block DC: only the swing passes, centred in the converter range"),
];
const CONVERTERS: &[(&str, &str)] = &[
    ("unknown", "Not known (treated as sampling)"),
    ("sar", "Sampling (SAR): the pin charges a sampling capacitor"),
    ("oversampling", "Oversampling (delta-sigma) with its own decimation filter"),
];
const RESPONSES: &[(&str, &str)] = &[
    ("flat", "Flat passband (Butterworth)"),
    ("linear_phase", "Keeps pulse shapes: linear phase (Bessel)"),
    ("steep", "Steepest roll-off, 0.5 dB ripple (Chebyshev)"),
    ("none", "No filter"),
];
const TOPOLOGIES: &[(&str, &str)] = &[
    ("sallen_key", "Sallen-Key (non-inverting, unity gain)"),
    ("multiple_feedback", "Multiple feedback (inverting, around a reference)"),
];
const SERIES: &[(&str, &str)] = &[
    ("E3", "E3"),
    ("E6", "E6"),
    ("E12", "E12"),
    ("E24", "E24"),
    ("E48", "E48"),
    ("E96", "E96"),
    ("E192", "E192"),
];
const AMP_MODES: &[(&str, &str)] = &[
    (AMP_STATE, "Let Rangefit state the requirements (a generic amplifier is assumed)"),
    (AMP_GIVEN, "I know figures of my amplifier"),
];

const fn q(q: Quantity) -> Kind {
    Kind::Quantity { q, percent: false }
}
const fn pct() -> Kind {
    Kind::Quantity { q: Quantity::Ratio, percent: true }
}

macro_rules! field {
    ($path:expr, $label:expr, $kind:expr, $step:ident, $group:expr, $req:expr, $help:expr) => {
        Field { path: $path, label: $label, kind: $kind, step: Step::$step, group: $group, required: $req, help: $help }
    };
}

/// Every input of the form, in page order. Together they cover every request field.
pub const FIELDS: &[Field] = &[
    // --- the sensor -------------------------------------------------------------------
    field!("source.kind", "Kind of output", Kind::Choice(KINDS), Sensor, "Its output", false, "How the sensor presents its signal."),
    field!("source.min", "Lowest output", q(Quantity::Voltage), Sensor, "Its output", true, "The lowest instantaneous voltage, DC level included, e.g. 0.5 V or -2 V; for a current loop the lowest loop current, e.g. 4 mA."),
    field!("source.max", "Highest output", q(Quantity::Voltage), Sensor, "Its output", true, "The highest instantaneous voltage, DC level included, e.g. 4.5 V; for a current loop the highest loop current, e.g. 20 mA."),
    field!("source.excitation", "Bridge excitation", Kind::Level, Sensor, "Its output", false, "The voltage across the bridge, e.g. 3.3 V, or “supply” for the highest positive rail."),
    field!("source.zero_balance", "Bridge zero balance", Kind::Level, Sensor, "Its output", false, "Its output with nothing to measure, as a share of full scale, from its datasheet, e.g. 2 % (the default)."),
    field!("source.sensitivity", "Bridge sensitivity (per volt of excitation)", Kind::Level, Sensor, "Its output", false, "Full-scale output per volt of excitation: 2 mV/V is 0.002 or \"2 m\"."),
    field!("source.bridge_resistance", "Bridge resistance", q(Quantity::Resistance), Sensor, "Its output", false, "Each arm's resistance, e.g. 350 Ω."),
    field!("source.active_arms", "Active arms", Kind::Whole, Sensor, "Its output", false, "1, 2 or 4 arms change with the measurand (a load cell has 4)."),
    field!("source.ratiometric", "The converter's reference is the bridge's excitation", Kind::Flag, Sensor, "Its output", false, "Then a drift of the excitation cancels in the reading."),
    field!("source.common_mode_min", "Lowest common-mode level", q(Quantity::Voltage), Sensor, "Its output", false, "The pair's average level against ground at its lowest, e.g. 2.2 V."),
    field!("source.common_mode_max", "Highest common-mode level", q(Quantity::Voltage), Sensor, "Its output", false, "The pair's average level at its highest, e.g. 2.8 V."),
    field!("source.front_end", "First amplifier", Kind::Choice(FRONT_ENDS), Sensor, "Its output", false, "What the pair's two wires meet first: the instrumentation amplifier loads nothing and multiplies the common-mode rejection by its first stage's gain."),
    field!("source.capacitance", "Sensor capacitance", q(Quantity::Capacitance), Sensor, "Its output", false, "High impedance, DC: electrode and cable capacitance; AC: the capacitance the signal sits behind (a piezo film's, e.g. 1 nF). Photodiode: its junction capacitance, e.g. 70 pF."),
    field!("source.dark_current", "Dark current", q(Quantity::Current), Sensor, "Its output", false, "The diode's current in the dark at its bias, from its datasheet, e.g. 2 nA."),
    field!("source.burden_max", "Largest voltage the loop allows across the input", q(Quantity::Voltage), Sensor, "Its output", false, "From the loop's supply and the transmitter's own drop, e.g. 5 V (a 250 Ω receiver at 20 mA)."),
    field!("source.fault_low", "Fault signalled below", q(Quantity::Current), Sensor, "Its output", false, "NAMUR NE 43: 3.6 mA for a 4–20 mA loop."),
    field!("source.fault_high", "Fault signalled above", q(Quantity::Current), Sensor, "Its output", false, "NAMUR NE 43: 21 mA for a 4–20 mA loop."),
    field!("source.coupling", "DC level", Kind::Choice(COUPLINGS), Sensor, "Its output", false, "Whether the sensor's DC level is part of the measurement."),
    field!("source.impedance", "Output impedance", q(Quantity::Resistance), Sensor, "Its output", false, "What the sensor has in series with its output; it enters the gain. 0 Ω for a stiff output; for a high-impedance sensor its source resistance, e.g. 500 MΩ."),
    field!("source.band_low", "Lowest frequency of interest", q(Quantity::Frequency), Sensor, "Band of interest", false, "Required when DC is blocked, e.g. 20 Hz. Leave empty to pass DC."),
    field!("source.band_high", "Highest frequency of interest", q(Quantity::Frequency), Sensor, "Band of interest", false, "Leave empty for a tenth of the sample rate."),
    field!("source.measurand.name", "Quantity measured", Kind::Text, Sensor, "What it measures (optional)", false, "e.g. pressure; used to scale converter codes back to it."),
    field!("source.measurand.unit", "Its unit", Kind::Text, Sensor, "What it measures (optional)", false, "e.g. kPa"),
    field!("source.measurand.at_min", "Value at the lowest output", Kind::Number, Sensor, "What it measures (optional)", false, "A plain number in that unit, e.g. 0."),
    field!("source.measurand.at_max", "Value at the highest output", Kind::Number, Sensor, "What it measures (optional)", false, "A plain number in that unit, e.g. 600."),
    field!("name", "Design name", Kind::Text, Sensor, "About this design", false, "Shown in your list of designs, on the schematic and in the report."),
    field!("notes", "Notes", Kind::LongText, Sensor, "About this design", false, "Anything worth remembering: where the sensor sits, what reads the converter."),
    // --- the converter input ----------------------------------------------------------
    field!("destination.min", "Bottom of the input range", q(Quantity::Voltage), Converter, "Input range", true, "The converter's lowest input voltage, e.g. 0 V."),
    field!("destination.max", "Top of the input range", q(Quantity::Voltage), Converter, "Input range", true, "The converter's highest input voltage (often its reference), e.g. 3.3 V."),
    field!("destination.headroom", "Margin kept free at each end", pct(), Converter, "Input range", false, "Share of the span left unused at each end to absorb tolerances, e.g. 5 %."),
    field!("destination.bits", "Resolution (bits)", Kind::Whole, Converter, "Sampling", false, "A whole number from 1 to 32."),
    field!("destination.sample_rate", "Sample rate", q(Quantity::Frequency), Converter, "Sampling", true, "Samples per second, e.g. 48 kHz."),
    field!("destination.impedance", "Input impedance", q(Quantity::Resistance), Converter, "Sampling", false, "What the converter input loads the circuit with, e.g. 10 kΩ."),
    field!("destination.converter", "Kind of converter", Kind::Choice(CONVERTERS), Converter, "Sampling", false, "Decides which frequency folds into the band and whether the pin needs a charge reservoir."),
    field!("destination.modulator_rate", "Modulator rate", q(Quantity::Frequency), Converter, "Sampling", false, "The rate the oversampling modulator samples at, e.g. 3.072 MHz; at least twice the sample rate."),
    field!("destination.acquisition_time", "Acquisition time", q(Quantity::Time), Converter, "Sampling", false, "How long the pin is connected to the sampling capacitor, from the converter's datasheet."),
    field!("destination.input_capacitance", "Sampling capacitance", q(Quantity::Capacitance), Converter, "Sampling", false, "The converter's sampling capacitor, from its datasheet, e.g. 20 pF."),
    field!("destination.injection_limit", "Largest fault current into the pin", q(Quantity::Current), Converter, "Sampling", false, "What the pin's protection may carry in a fault, from the converter's datasheet, e.g. 5 mA."),
    field!("filter.response", "Filter response", Kind::Choice(RESPONSES), Converter, "Anti-alias filter", false, "The shape of the low-pass ahead of the converter."),
    field!("filter.topology", "Sections built as", Kind::Choice(TOPOLOGIES), Converter, "Anti-alias filter", false, "How each second-order section is built."),
    field!("filter.order", "Order", Kind::Whole, Converter, "Anti-alias filter", false, "Leave empty for the lowest order that meets the rejection."),
    field!("filter.max_order", "Highest order allowed", Kind::Whole, Converter, "Anti-alias filter", false, "Beyond 8, part tolerances spoil the response; a faster or oversampling converter is the better answer."),
    field!("filter.passband_error", "In-band error allowed at the band's top", Kind::Level, Converter, "Anti-alias filter", false, "In dB, e.g. 0.1 dB."),
    field!("filter.out_of_band_level", "Strongest content above the band", Kind::Level, Converter, "Anti-alias filter", false, "Relative to full scale: -40 dB, 1 % or 0.01. Full scale (0 dB) is the safe assumption."),
    field!("keep_polarity", "The output rises when the sensor's signal rises", Kind::Flag, Converter, "Direction", false, "Untick to let Rangefit use an inverting stage when that is simpler."),
    // --- power and parts --------------------------------------------------------------
    field!("supplies", "Supply rails", Kind::Rails, Parts, "Power", true, "Every rail you can use, separated by commas: “3.3” for one rail, “5, 3.3” for two, “12, -12” for a split supply. Ground is always there."),
    field!("parts.resistor_series", "Resistor series", Kind::Choice(SERIES), Parts, "Resistors", false, "The IEC 60063 series you stock."),
    field!("parts.resistor_tolerance", "Resistor tolerance", pct(), Parts, "Resistors", false, "e.g. 1 % or 0.1 %."),
    field!("parts.resistor_min", "Smallest resistor", q(Quantity::Resistance), Parts, "Resistors", false, "Below this, currents and loading grow."),
    field!("parts.resistor_max", "Largest resistor", q(Quantity::Resistance), Parts, "Resistors", false, "Above this, noise and leakage grow; at least ten times the smallest."),
    field!("parts.capacitor_series", "Capacitor series", Kind::Choice(SERIES), Parts, "Capacitors", false, "The IEC 60063 series you stock."),
    field!("parts.capacitor_tolerance", "Capacitor tolerance", pct(), Parts, "Capacitors", false, "e.g. 10 %."),
    field!("amplifier", "Amplifier", Kind::Choice(AMP_MODES), Parts, "Amplifier", false, "Either way the design lists what the amplifier must provide."),
    field!("amplifier.gbw", "Gain-bandwidth (GBW)", q(Quantity::Frequency), Parts, "Amplifier", false, ""),
    field!("amplifier.slew_rate", "Slew rate", q(Quantity::SlewRate), Parts, "Amplifier", false, ""),
    field!("amplifier.swing_low", "Output reaches the lower rail within", q(Quantity::Voltage), Parts, "Amplifier", false, ""),
    field!("amplifier.swing_high", "Output reaches the upper rail within", q(Quantity::Voltage), Parts, "Amplifier", false, ""),
    field!("amplifier.cm_low", "Input range from the lower rail", q(Quantity::Voltage), Parts, "Amplifier", false, "Negative: beyond the rail."),
    field!("amplifier.cm_high", "Input range from the upper rail", q(Quantity::Voltage), Parts, "Amplifier", false, "Negative: beyond the rail."),
    field!("amplifier.supply_min", "Lowest supply", q(Quantity::Voltage), Parts, "Amplifier", false, ""),
    field!("amplifier.supply_max", "Highest supply", q(Quantity::Voltage), Parts, "Amplifier", false, ""),
    field!("amplifier.offset", "Input offset voltage", q(Quantity::Voltage), Parts, "Amplifier", false, ""),
    field!("amplifier.bias_current", "Input bias current", q(Quantity::Current), Parts, "Amplifier", false, ""),
    field!("amplifier.noise_voltage", "Voltage noise density", q(Quantity::VoltageNoise), Parts, "Amplifier", false, ""),
    field!("amplifier.noise_current", "Current noise density", q(Quantity::CurrentNoise), Parts, "Amplifier", false, ""),
    field!("amplifier.noise_corner", "1/f noise corner", q(Quantity::Frequency), Parts, "Amplifier", false, ""),
    field!("amplifier.open_loop_gain", "Open-loop gain (V/V)", q(Quantity::Ratio), Parts, "Amplifier", false, ""),
    field!("analysis.temperature", "Temperature", q(Quantity::Temperature), Parts, "Analyses", false, "For thermal noise, e.g. 300 K or 27 °C."),
    field!("analysis.monte_carlo_runs", "Monte Carlo builds", Kind::Whole, Parts, "Analyses", false, "Random builds within the tolerances; 0 skips the spread."),
    field!("analysis.seed", "Monte Carlo seed", Kind::Whole, Parts, "Analyses", false, "The same seed gives the same builds."),
];

/// The field with request path `path`.
pub fn field(path: &str) -> Option<&'static Field> {
    FIELDS.iter().find(|f| f.path == path)
}

/// Index of the field with request path `path` in [`FIELDS`].
pub fn index(path: &str) -> Option<usize> {
    FIELDS.iter().position(|f| f.path == path)
}

/// The texts of the form, one per field of [`FIELDS`], keyed by path.
pub type Values = BTreeMap<&'static str, String>;

/// The text a value is shown with: the engine's formatting with the fewest significant
/// digits that reads back as exactly the same number, so loading a request into the form
/// never changes it.
pub fn value_text(v: f64, kind: Kind) -> String {
    let Kind::Quantity { q, percent } = kind else { return Value::from(v).to_string() };
    if percent {
        for sig in 1..=17 {
            let text = format!("{} %", units::format_sig(v * 100.0, Quantity::Ratio, sig));
            if units::parse(&text, q) == Ok(v) {
                return text;
            }
        }
    }
    for sig in 3..=17 {
        let text = units::format_sig(v, q, sig);
        if units::parse(&text, q) == Ok(v) {
            return text;
        }
    }
    Value::from(v).to_string()
}

fn flag_text(b: bool) -> String {
    if b { "true".into() } else { "false".into() }
}

/// The form of a new design: required fields empty, every optional field showing the
/// default the engine would use (the amplifier's figures come from its class and are
/// shown as placeholders instead).
pub fn new_design() -> Values {
    let parts = Parts::default();
    let analysis = AnalysisOptions::default();
    let mut v = Values::new();
    for f in FIELDS {
        v.insert(f.path, String::new());
    }
    let mut put = |path: &'static str, text: String| {
        v.insert(path, text);
    };
    put("name", "New design".into());
    put("source.kind", "single_ended".into());
    put("source.coupling", "dc".into());
    put("source.front_end", "auto".into());
    put("source.impedance", value_text(0.0, q(Quantity::Resistance)));
    put("destination.headroom", value_text(DEFAULT_HEADROOM, pct()));
    put("destination.bits", DEFAULT_BITS.to_string());
    put("destination.impedance", value_text(DEFAULT_DESTINATION_IMPEDANCE, q(Quantity::Resistance)));
    put("destination.converter", "unknown".into());
    put("destination.input_capacitance", value_text(DEFAULT_INPUT_CAPACITANCE, q(Quantity::Capacitance)));
    put("destination.injection_limit", value_text(DEFAULT_INJECTION_LIMIT, q(Quantity::Current)));
    put("filter.response", "flat".into());
    put("filter.topology", "sallen_key".into());
    put("filter.max_order", DEFAULT_MAX_ORDER.to_string());
    put("keep_polarity", flag_text(true));
    put("parts.resistor_series", parts.resistor_series.name().to_string());
    put("parts.resistor_tolerance", value_text(parts.resistor_tolerance, pct()));
    put("parts.resistor_min", value_text(parts.resistor_min, q(Quantity::Resistance)));
    put("parts.resistor_max", value_text(parts.resistor_max, q(Quantity::Resistance)));
    put("parts.capacitor_series", parts.capacitor_series.name().to_string());
    put("parts.capacitor_tolerance", value_text(parts.capacitor_tolerance, pct()));
    put("amplifier", AMP_STATE.into());
    put("analysis.temperature", value_text(analysis.temperature, q(Quantity::Temperature)));
    put("analysis.monte_carlo_runs", analysis.monte_carlo_runs.to_string());
    put("analysis.seed", analysis.seed.to_string());
    v
}

fn lookup<'a>(json: &'a Value, path: &str) -> Option<&'a Value> {
    let mut at = json;
    for key in path.split('.') {
        at = at.get(key)?;
    }
    (!at.is_null()).then_some(at)
}

/// The form showing a request given as JSON (a demo, a saved design, a link's request).
/// Texts are kept as written; numbers are written with their unit; absent optional fields
/// show their defaults as for a new design. Values of the wrong JSON type are shown as
/// their JSON text so the engine reports them under the field.
pub fn from_json(json: &Value) -> Values {
    let mut v = new_design();
    let sensor = lookup(json, "source.kind").and_then(Value::as_str).unwrap_or("single_ended").to_string();
    for f in FIELDS {
        if f.path == "amplifier" {
            let given = json.get("amplifier").and_then(Value::as_object).is_some_and(|m| m.values().any(|x| !x.is_null()));
            v.insert(f.path, if given { AMP_GIVEN } else { AMP_STATE }.into());
            continue;
        }
        let Some(x) = lookup(json, f.path) else {
            if f.path == "name" {
                v.insert(f.path, String::new());
            }
            continue;
        };
        let text = match (x, f.kind_for(&sensor)) {
            (Value::String(s), _) => s.clone(),
            (Value::Bool(b), _) => flag_text(*b),
            (Value::Number(n), kind) => match n.as_f64() {
                Some(x) if !matches!(kind, Kind::Whole | Kind::Number) => value_text(x, kind),
                _ => n.to_string(),
            },
            (Value::Array(items), Kind::Rails) => items
                .iter()
                .map(|item| match item {
                    Value::String(s) => s.clone(),
                    Value::Number(n) => n.as_f64().map(|x| value_text(x, q(Quantity::Voltage))).unwrap_or_else(|| n.to_string()),
                    other => other.to_string(),
                })
                .collect::<Vec<_>>()
                .join(", "),
            (other, Kind::Rails) => match other {
                Value::Number(n) => n.as_f64().map(|x| value_text(x, q(Quantity::Voltage))).unwrap_or_else(|| n.to_string()),
                _ => other.to_string(),
            },
            (other, _) => other.to_string(),
        };
        v.insert(f.path, text);
    }
    v
}

/// The form showing a normalised request (every value in SI units): used for share links,
/// whose request the engine has already read.
pub fn from_request(req: &Request) -> Values {
    let json = serde_json::to_value(req).unwrap_or(Value::Null);
    from_json(&json)
}

/// The result of reading the form.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Validation {
    /// The request as JSON, texts as typed (what is saved and restored).
    pub json: Value,
    /// Message under each field that holds a bad value, by path.
    pub errors: BTreeMap<&'static str, String>,
    /// Required fields still empty.
    pub missing: Vec<&'static str>,
    /// A problem that belongs to no single field.
    pub general: Option<String>,
    /// The request, when the form is complete and every value is good.
    pub request: Option<Request>,
}

impl Validation {
    pub fn is_complete(&self) -> bool {
        self.request.is_some()
    }

    /// Bad and missing fields of one step.
    pub fn problems_in(&self, step: Step) -> (usize, usize) {
        let in_step = |p: &str| field(p).is_some_and(|f| f.step == step);
        (self.errors.keys().filter(|p| in_step(p)).count(), self.missing.iter().filter(|p| in_step(p)).count())
    }
}

fn insert_path(root: &mut Map<String, Value>, path: &str, value: Value) {
    let mut keys = path.split('.').peekable();
    let mut at = root;
    while let Some(key) = keys.next() {
        if keys.peek().is_none() {
            at.insert(key.to_string(), value);
            return;
        }
        let entry = at.entry(key.to_string()).or_insert_with(|| Value::Object(Map::new()));
        if !entry.is_object() {
            *entry = Value::Object(Map::new());
        }
        let Value::Object(next) = entry else { return };
        at = next;
    }
}

/// The field a request error belongs to: `supplies[1]` → `supplies`.
fn field_of_error(path: &str) -> Option<&'static str> {
    let base = path.split('[').next().unwrap_or(path);
    field(base).map(|f| f.path)
}

/// Reads the form: checks every value with the engine's parser, assembles the request JSON
/// and reads it with `Request::from_value`.
pub fn validate(values: &Values) -> Validation {
    let text = |path: &str| values.get(path).map(|s| s.trim()).unwrap_or("");
    let mut root = Map::new();
    root.insert("version".into(), Value::from(rangefit_engine::request::CURRENT_VERSION));
    let mut out = Validation::default();
    let measurand_used = FIELDS.iter().filter(|f| f.path.starts_with("source.measurand.")).any(|f| !text(f.path).is_empty());

    for f in FIELDS {
        let t = text(f.path);
        if f.path == "amplifier" || !f.applies(|p| text(p).to_string()) {
            continue;
        }
        if t.is_empty() {
            // A bridge's range follows from its sensitivity when left empty.
            let optional_here = text("source.kind") == "bridge" && matches!(f.path, "source.min" | "source.max");
            if (f.required && !optional_here) || (measurand_used && f.path.starts_with("source.measurand.") && !f.path.ends_with(".unit")) {
                out.missing.push(f.path);
            }
            continue;
        }
        let value = match f.kind_for(text("source.kind")) {
            Kind::Quantity { q, .. } => {
                if let Err(e) = units::parse(t, q) {
                    out.errors.insert(f.path, e.message(q));
                }
                Value::String(t.to_string())
            }
            Kind::Whole => match serde_json::from_str::<Number>(t) {
                Ok(n) => Value::Number(n),
                Err(_) => Value::String(t.to_string()),
            },
            Kind::Number => match serde_json::from_str::<Number>(t) {
                Ok(n) => Value::Number(n),
                Err(_) => {
                    out.errors.insert(f.path, format!("'{t}' is not a plain number; write a number in the quantity's own unit, such as 600 or -2.5e3"));
                    Value::String(t.to_string())
                }
            },
            Kind::Text | Kind::LongText | Kind::Choice(_) => Value::String(t.to_string()),
            Kind::Level => match serde_json::from_str::<Number>(t) {
                Ok(n) => Value::Number(n),
                Err(_) => Value::String(t.to_string()),
            },
            Kind::Flag => Value::Bool(t == "true"),
            Kind::Rails => {
                let items: Vec<&str> = t.split([',', ';']).map(str::trim).filter(|s| !s.is_empty()).collect();
                for (i, item) in items.iter().enumerate() {
                    if let Err(e) = units::parse(item, Quantity::Voltage) {
                        let which = if items.len() > 1 { format!("rail {} ('{item}'): ", i + 1) } else { String::new() };
                        out.errors.insert(f.path, format!("{which}{}", e.message(Quantity::Voltage)));
                        break;
                    }
                }
                if items.is_empty() {
                    out.missing.push(f.path);
                    continue;
                }
                Value::Array(items.into_iter().map(|s| Value::String(s.to_string())).collect())
            }
        };
        insert_path(&mut root, f.path, value);
    }
    if text("amplifier") == AMP_GIVEN && !root.contains_key("amplifier") {
        root.insert("amplifier".into(), Value::Object(Map::new()));
    }
    out.json = Value::Object(root);

    match Request::from_value(&out.json) {
        Ok(req) if out.errors.is_empty() && out.missing.is_empty() => out.request = Some(req),
        Ok(_) => {}
        Err(e) => match field_of_error(&e.field) {
            Some(path) if out.missing.contains(&path) || out.errors.contains_key(path) => {}
            Some(path) => {
                out.errors.insert(path, e.message);
            }
            None if out.errors.is_empty() && out.missing.is_empty() => out.general = Some(e.to_string()),
            None => {}
        },
    }
    out
}

/// The display name of a request JSON: its `name`, or what the engine calls an unnamed one.
pub fn name_of(json: &Value) -> String {
    match json.get("name").and_then(Value::as_str).map(str::trim) {
        Some(n) if !n.is_empty() => n.to_string(),
        _ => "Untitled design".to_string(),
    }
}

/// Placeholder of an optional field left empty: what the engine will use instead.
pub fn placeholder(f: &Field, design: Option<&rangefit_engine::Design>) -> String {
    let from_design = |v: Option<f64>| v.map(|x| units::format(x, f.quantity().unwrap_or(Quantity::Ratio)));
    let amp = design.map(|d| &d.amplifier);
    let assumed = |x: Option<f64>| from_design(x).map(|t| format!("assumed: {t}")).unwrap_or_else(|| "assumed from a generic class".into());
    match f.path {
        "source.band_low" => "empty: from DC".into(),
        "source.band_high" => {
            from_design(design.map(|d| d.request.source.band_high)).map(|t| format!("empty: a tenth of the sample rate ({t})")).unwrap_or_else(|| "empty: a tenth of the sample rate".into())
        }
        "name" => "Untitled design".into(),
        "destination.modulator_rate" => "needed for an oversampling converter".into(),
        "source.burden_max" => "empty: 5 V".into(),
        "source.fault_low" | "source.fault_high" => {
            let spec = design.and_then(|d| d.request.source.current_loop.as_ref());
            let v = spec.map(|s| if f.path == "source.fault_low" { s.fault_low } else { s.fault_high });
            v.map(|x| format!("empty: {}", units::format(x, Quantity::Current))).unwrap_or_else(|| "empty: NAMUR NE 43 limits".into())
        }
        "destination.acquisition_time" => {
            let t = design.map(|d| units::format(d.request.destination.acquisition_time, Quantity::Time));
            t.map(|t| format!("empty: a quarter of the sample period ({t})")).unwrap_or_else(|| "empty: a quarter of the sample period".into())
        }
        "filter.order" => match design.and_then(|d| d.filter.as_ref()) {
            Some(f) => format!("empty: the lowest that meets the rejection ({})", f.order),
            None => "empty: the lowest that meets the rejection".into(),
        },
        "filter.passband_error" => format!("empty: {} dB (steep: its 0.5 dB ripple)", DEFAULT_PASSBAND_ERROR_DB),
        "filter.out_of_band_level" => "empty: full scale (0 dB)".into(),
        "amplifier.gbw" => assumed(amp.map(|a| a.gbw)),
        "amplifier.slew_rate" => assumed(amp.map(|a| a.slew_rate)),
        "amplifier.swing_low" => assumed(amp.map(|a| a.swing_low)),
        "amplifier.swing_high" => assumed(amp.map(|a| a.swing_high)),
        "amplifier.cm_low" => assumed(amp.map(|a| a.cm_low)),
        "amplifier.cm_high" => assumed(amp.map(|a| a.cm_high)),
        "amplifier.supply_min" => assumed(amp.map(|a| a.supply_min)),
        "amplifier.supply_max" => assumed(amp.map(|a| a.supply_max)),
        "amplifier.offset" => assumed(amp.map(|a| a.offset)),
        "amplifier.bias_current" => assumed(amp.map(|a| a.bias_current)),
        "amplifier.noise_voltage" => assumed(amp.map(|a| a.noise_voltage)),
        "amplifier.noise_current" => assumed(amp.map(|a| a.noise_current)),
        "amplifier.noise_corner" => assumed(amp.map(|a| a.noise_corner)),
        "amplifier.open_loop_gain" => assumed(amp.map(|a| a.open_loop_gain)),
        _ => match f.kind {
            Kind::Quantity { q, .. } => {
                let (a, b) = match q {
                    Quantity::Voltage => ("e.g. 3.3 V", "e.g. 250 mV"),
                    Quantity::Frequency => ("e.g. 48 kHz", "e.g. 10 Hz"),
                    Quantity::Resistance => ("e.g. 4.7k or 4k7", "e.g. 10 kΩ"),
                    _ => ("", ""),
                };
                if f.required { a.into() } else { b.into() }
            }
            _ => String::new(),
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rangefit_engine::{demos, design, share};

    fn demo_json(i: usize) -> Value {
        serde_json::from_str(demos::ALL[i].json).expect("demo is JSON")
    }

    #[test]
    fn every_request_field_has_an_input() {
        // The normalised request of a demo with every optional part present, flattened to
        // leaf paths, must be covered by FIELDS (arrays count as one field).
        let mut json = demo_json(0);
        json["amplifier"] = serde_json::json!({"gbw": 1e6});
        json["source"]["measurand"] = serde_json::json!({"name": "depth", "unit": "m", "at_min": 0, "at_max": 10});
        let req = Request::from_value(&json).expect("valid");
        let norm = serde_json::to_value(&req).expect("serialise");
        fn leaves(v: &Value, prefix: &str, out: &mut Vec<String>) {
            match v {
                Value::Object(m) => {
                    for (k, x) in m {
                        let p = if prefix.is_empty() { k.clone() } else { format!("{prefix}.{k}") };
                        leaves(x, &p, out);
                    }
                }
                _ => out.push(prefix.to_string()),
            }
        }
        let mut paths = Vec::new();
        leaves(&norm, "", &mut paths);
        for p in paths {
            if p == "version" {
                continue;
            }
            assert!(field(&p).is_some(), "no input for request field {p}");
        }
        for name in ["gbw", "slew_rate", "swing_low", "swing_high", "cm_low", "cm_high", "supply_min", "supply_max", "offset", "bias_current", "noise_voltage", "noise_current", "noise_corner", "open_loop_gain"] {
            assert!(field(&format!("amplifier.{name}")).is_some(), "no input for amplifier.{name}");
        }
    }

    #[test]
    fn every_demo_reads_back_to_the_same_request() {
        for (i, demo) in demos::ALL.iter().enumerate() {
            let json = demo_json(i);
            let direct = Request::from_value(&json).expect("demo valid");
            let v = validate(&from_json(&json));
            assert_eq!(v.errors, BTreeMap::new(), "demo {}", demo.id);
            assert_eq!(v.missing, Vec::<&str>::new(), "demo {}", demo.id);
            assert_eq!(v.request.as_ref(), Some(&direct), "demo {} through the form", demo.id);
        }
    }

    #[test]
    fn a_link_request_reads_back_exactly() {
        // Awkward values that three significant digits would round.
        let mut json = demo_json(1);
        json["source"]["min"] = Value::from(0.123456789);
        json["source"]["max"] = Value::from(4.987654321);
        json["destination"]["sample_rate"] = Value::from(1234.5678);
        json["parts"]["resistor_tolerance"] = Value::from(0.0007);
        let req = Request::from_value(&json).expect("valid");
        let linked = share::decode(&share::encode(&req)).expect("link decodes");
        let v = validate(&from_request(&linked));
        assert_eq!(v.request.as_ref(), Some(&linked));
        assert_eq!(design(v.request.as_ref().unwrap()).parts, design(&req).parts);
    }

    #[test]
    fn every_demo_reads_back_through_a_link() {
        for (i, demo) in demos::ALL.iter().enumerate() {
            let req = Request::from_value(&demo_json(i)).expect("demo valid");
            let linked = share::decode(&share::encode(&req)).expect("link decodes");
            let v = validate(&from_request(&linked));
            assert_eq!(v.errors, BTreeMap::new(), "demo {}", demo.id);
            assert_eq!(v.request.as_ref(), Some(&linked), "demo {} through a link", demo.id);
        }
    }

    #[test]
    fn value_text_round_trips_and_reads_well() {
        let cases = [
            (1.16, q(Quantity::Voltage), "1.16 V"),
            (192e3, q(Quantity::Frequency), "192 kHz"),
            (0.05, pct(), "5 %"),
            (0.001, pct(), "0.1 %"),
            (1e6, q(Quantity::Resistance), "1 MΩ"),
            (300.0, q(Quantity::Temperature), "300 K"),
        ];
        for (x, kind, want) in cases {
            assert_eq!(value_text(x, kind), want);
        }
        for x in [0.1 + 0.2, 1.0 / 3.0, 4.7e3 * 1.0000001, -2.5, 1e-7 * 3.3] {
            let t = value_text(x, q(Quantity::Voltage));
            assert_eq!(units::parse(&t, Quantity::Voltage), Ok(x), "{t}");
        }
    }

    #[test]
    fn a_new_design_is_incomplete_and_names_what_is_missing() {
        let v = validate(&new_design());
        assert!(v.request.is_none());
        assert!(v.errors.is_empty(), "{:?}", v.errors);
        assert_eq!(v.missing, vec!["source.min", "source.max", "destination.min", "destination.max", "destination.sample_rate", "supplies"]);
        assert_eq!(v.problems_in(Step::Sensor), (0, 2));
        assert_eq!(v.problems_in(Step::Converter), (0, 3));
        assert_eq!(v.problems_in(Step::Parts), (0, 1));
    }

    #[test]
    fn a_filled_new_design_gives_the_engine_defaults() {
        let mut v = new_design();
        for (p, t) in [("source.min", "0.5 V"), ("source.max", "4.5 V"), ("destination.min", "0"), ("destination.max", "3.3"), ("destination.sample_rate", "1k"), ("supplies", "5, 3.3")] {
            v.insert(p, t.into());
        }
        let got = validate(&v).request.expect("complete");
        let minimal = serde_json::json!({"name": "New design", "source": {"min": 0.5, "max": 4.5}, "destination": {"min": 0, "max": 3.3, "sample_rate": 1000}, "supplies": [5, 3.3]});
        assert_eq!(got, Request::from_value(&minimal).expect("valid"));
    }

    #[test]
    fn bad_values_are_reported_under_their_fields() {
        let mut v = from_json(&demo_json(0));
        v.insert("source.min", "1.2 Ω".into());
        v.insert("destination.sample_rate", "fast".into());
        v.insert("supplies", "3.3, 5 A".into());
        v.insert("destination.bits", "12.5".into());
        let r = validate(&v);
        assert!(r.request.is_none());
        assert!(r.errors["source.min"].contains("resistance unit"), "{}", r.errors["source.min"]);
        assert!(r.errors["destination.sample_rate"].contains("frequency"), "{}", r.errors["destination.sample_rate"]);
        assert!(r.errors["supplies"].starts_with("rail 2"), "{}", r.errors["supplies"]);
        assert!(r.errors["destination.bits"].contains("whole number"), "{}", r.errors["destination.bits"]);
    }

    #[test]
    fn engine_rules_land_on_the_field_they_name() {
        let mut v = from_json(&demo_json(0));
        v.insert("source.band_low", String::new());
        let r = validate(&v);
        assert!(r.errors["source.band_low"].contains("required for AC"), "{:?}", r.errors);
        let mut v = from_json(&demo_json(1));
        v.insert("source.max", "0.1".into());
        let r = validate(&v);
        assert!(r.errors["source.max"].contains("below"), "{:?}", r.errors);
    }

    #[test]
    fn amplifier_figures_count_only_when_given() {
        let mut v = from_json(&demo_json(0));
        v.insert("amplifier.gbw", "not a number".into());
        assert!(validate(&v).request.is_some(), "ignored while Rangefit states the requirements");
        v.insert("amplifier", AMP_GIVEN.into());
        assert!(validate(&v).errors.contains_key("amplifier.gbw"));
        v.insert("amplifier.gbw", "1 MHz".into());
        let req = validate(&v).request.expect("valid");
        assert_eq!(req.amplifier.gbw, Some(1e6));
        assert_eq!(from_json(&validate(&v).json)["amplifier"], AMP_GIVEN);
    }

    #[test]
    fn a_half_filled_measurand_asks_for_the_rest() {
        let mut v = from_json(&demo_json(1));
        v.insert("source.measurand.name", "pressure".into());
        let r = validate(&v);
        assert!(r.missing.contains(&"source.measurand.at_min") && r.missing.contains(&"source.measurand.at_max"));
        v.insert("source.measurand.at_min", "0".into());
        v.insert("source.measurand.at_max", "six hundred".into());
        assert!(validate(&v).errors.contains_key("source.measurand.at_max"));
        v.insert("source.measurand.at_max", "600".into());
        let req = validate(&v).request.expect("complete");
        assert_eq!(req.source.measurand.map(|m| m.at_max), Some(600.0));
    }

    #[test]
    fn converter_and_filter_fields_apply_only_where_they_mean_something() {
        let mut v = from_json(&demo_json(0));
        // A modulator rate typed for a sampling converter is kept in the form, not sent.
        v.insert("destination.modulator_rate", "3.072 MHz".into());
        let r = validate(&v);
        assert!(r.request.is_some(), "{:?}", r.errors);
        assert!(r.json["destination"].get("modulator_rate").is_none());
        v.insert("destination.converter", "oversampling".into());
        let req = validate(&v).request.expect("complete");
        assert_eq!(req.destination.modulator_rate, Some(3.072e6));
        v.insert("destination.modulator_rate", String::new());
        assert!(validate(&v).errors["destination.modulator_rate"].contains("required"), "the engine's rule lands under the field");
        v.insert("destination.modulator_rate", "3.072 MHz".into());
        // Levels go to the engine as typed; its message lands under the field.
        v.insert("filter.out_of_band_level", "-40 dB".into());
        v.insert("filter.passband_error", "0.2".into());
        let req = validate(&v).request.expect("complete");
        assert!((req.filter.out_of_band_level - 0.01).abs() < 1e-12, "{}", req.filter.out_of_band_level);
        assert_eq!(req.filter.passband_error, 0.2);
        v.insert("filter.out_of_band_level", "+6 dB".into());
        assert!(validate(&v).errors.contains_key("filter.out_of_band_level"));
        // No filter: its settings are left out, whatever they hold.
        v.insert("filter.response", "none".into());
        v.insert("filter.order", "99".into());
        let r = validate(&v);
        assert!(r.request.is_some(), "{:?}", r.errors);
        assert_eq!(r.json["filter"], serde_json::json!({"response": "none"}));
    }

    #[test]
    fn the_front_end_applies_to_pairs_and_bridges_only() {
        let bee = rangefit_engine::demos::ALL.iter().position(|d| d.id == "beehive-scale").expect("beehive demo");
        let mut v = from_json(&demo_json(bee));
        assert_eq!(v["source.front_end"], "auto", "a bridge shows the front-end choice at its default");
        v.insert("source.front_end", "difference".into());
        let req = validate(&v).request.expect("complete");
        assert_eq!(req.source.front_end, rangefit_engine::request::FrontEnd::Difference);
        // A single-ended sensor keeps the text but does not send it (the engine refuses it there).
        let mut v = from_json(&demo_json(0));
        v.insert("source.front_end", "instrumentation".into());
        let r = validate(&v);
        assert!(r.request.is_some(), "{:?}", r.errors);
        assert!(r.json["source"].get("front_end").is_none());
    }

    #[test]
    fn steps_go_forward_and_back() {
        assert_eq!(Step::Sensor.next(), Some(Step::Converter));
        assert_eq!(Step::Design.next(), None);
        assert_eq!(Step::Sensor.previous(), None);
        assert_eq!(Step::Design.previous(), Some(Step::Parts));
        assert_eq!(Step::Parts.number(), 3);
    }
}
