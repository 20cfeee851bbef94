//! The request: the public, versioned contract between a user (form, share link, script)
//! and the engine.
//!
//! A request is read from JSON where every physical value may be a plain number in SI base
//! units or a string with a unit (`"4.7k"`, `"20 Hz"`, `"-250 mV"`). Reading normalises it:
//! values become numbers in SI base units and every optional field receives its stated
//! default, so the normalised request printed by `rangefit design` can be read back as is.
//!
//! Reading fails only for malformed input (wrong JSON, a value that does not parse, an
//! unknown field, an unknown series). Requests that are well formed but cannot be built
//! (zero span, band above Nyquist, range beyond the rails) are accepted here and reported
//! as error checks by [`crate::design`], so the user sees everything wrong at once.

use serde::{Deserialize, Serialize};
use serde_json::{Map, Value};
use std::fmt;

use crate::units::{self, Quantity};
use crate::values::Series;

/// The newest request version this build reads and writes.
pub const CURRENT_VERSION: u32 = 1;

/// Default headroom: 5 % of the converter span kept free at each end, enough to absorb
/// rounding to standard values plus 1 % resistor and amplifier offset errors (common practice).
pub const DEFAULT_HEADROOM: f64 = 0.05;
/// Default converter input impedance when none is given: a high-impedance input (1 MΩ).
pub const DEFAULT_DESTINATION_IMPEDANCE: f64 = 1e6;
/// Default resolution when none is given.
pub const DEFAULT_BITS: u32 = 12;
/// When `band_high` is absent it defaults to this fraction of the sample rate.
pub const DEFAULT_BAND_FRACTION_OF_FS: f64 = 0.1;

/// A normalised design request. All physical values are in SI base units.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Request {
    pub version: u32,
    pub name: String,
    #[serde(default)]
    pub notes: String,
    pub source: Source,
    pub destination: Destination,
    /// The rails available, in volts (e.g. `[5]`, `[12, -12]`).
    pub supplies: Vec<f64>,
    pub parts: Parts,
    /// Amplifier facts the user knows; absent fields are taken from a generic class.
    #[serde(default)]
    pub amplifier: AmplifierSpec,
    /// The output rises when the sensor's signal rises.
    pub keep_polarity: bool,
    /// Options of the analyses.
    #[serde(default)]
    pub analysis: AnalysisOptions,
    /// The anti-alias filter wanted.
    #[serde(default)]
    pub filter: FilterSpec,
}

/// Default in-band error allowed at `band_high`, dB: 0.1 dB is about 1.2 % of amplitude,
/// below a typical 1 % sensor's own error (common practice).
pub const DEFAULT_PASSBAND_ERROR_DB: f64 = 0.1;
/// Default passband error of the steep response, dB: its own ripple (0.5 dB).
pub const STEEP_PASSBAND_ERROR_DB: f64 = 0.5;
/// Default highest filter order: beyond 8 the parts' tolerances dominate the response and
/// a faster converter or an oversampling one is the better answer (common practice).
pub const DEFAULT_MAX_ORDER: u32 = 8;
/// Highest order a request may ask for.
pub const ORDER_LIMIT: u32 = 12;
/// Default acquisition time of a sampling converter, as a fraction of the sample period:
/// a quarter leaves three quarters for the conversion (common practice for SAR converters
/// that track between conversions; the converter's datasheet governs).
pub const DEFAULT_ACQUISITION_FRACTION: f64 = 0.25;
/// Default sampling capacitance of a sampling converter's input, F (typical of 12–16-bit
/// SAR inputs, common practice; the converter's datasheet governs).
pub const DEFAULT_INPUT_CAPACITANCE: f64 = 20e-12;
/// Default largest current a fault may push into the converter's input protection, A
/// (a figure many converters and microcontroller inputs tolerate per pin, common practice;
/// the converter's datasheet governs).
pub const DEFAULT_INJECTION_LIMIT: f64 = 5e-3;

/// What kind of converter the output drives.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ConverterKind {
    /// A sampling converter with a switched-capacitor (charge-bucket) input.
    Sar,
    /// An oversampling converter with its own decimation filter.
    Oversampling,
    /// Not known: treated as a sampling converter.
    Unknown,
}

impl ConverterKind {
    /// The converter samples its input directly at the sample rate (SAR or unknown).
    pub fn samples(self) -> bool {
        !matches!(self, ConverterKind::Oversampling)
    }
}

/// The response family of the anti-alias filter.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ResponseKind {
    /// Maximally flat (Butterworth).
    Flat,
    /// Maximally flat delay (Bessel), for step and pulse shapes.
    LinearPhase,
    /// Equal ripple (Chebyshev, 0.5 dB ripple).
    Steep,
    /// No filter.
    None,
}

impl ResponseKind {
    pub fn name(self) -> &'static str {
        match self {
            ResponseKind::Flat => "flat (Butterworth)",
            ResponseKind::LinearPhase => "linear phase (Bessel)",
            ResponseKind::Steep => "steep (Chebyshev, 0.5 dB ripple)",
            ResponseKind::None => "none",
        }
    }
}

/// How each second-order section is built.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum FilterTopology {
    /// Unity-gain Sallen-Key (non-inverting).
    SallenKey,
    /// Multiple feedback (inverting, around a reference).
    MultipleFeedback,
}

/// The anti-alias filter wanted (`filter` in the request).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FilterSpec {
    pub response: ResponseKind,
    /// A fixed order; absent, the engine chooses the lowest order that meets the rule.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub order: Option<u32>,
    pub max_order: u32,
    pub topology: FilterTopology,
    /// In-band error allowed at `band_high`, dB (positive).
    pub passband_error: f64,
    /// How strong unwanted content above the band can be, as a fraction of full scale.
    pub out_of_band_level: f64,
}

impl Default for FilterSpec {
    fn default() -> Self {
        FilterSpec {
            response: ResponseKind::Flat,
            order: None,
            max_order: DEFAULT_MAX_ORDER,
            topology: FilterTopology::SallenKey,
            passband_error: DEFAULT_PASSBAND_ERROR_DB,
            out_of_band_level: 1.0,
        }
    }
}

/// Options of the analyses (`analysis` in the request).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct AnalysisOptions {
    /// Monte Carlo builds (default 10,000).
    pub monte_carlo_runs: usize,
    /// Seed of the Monte Carlo generator; the same seed gives the same builds.
    pub seed: u64,
    /// Temperature for thermal noise, K (default 300 K).
    pub temperature: f64,
}

impl Default for AnalysisOptions {
    fn default() -> Self {
        AnalysisOptions { monte_carlo_runs: 10_000, seed: 1, temperature: 300.0 }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum SourceKind {
    /// A voltage against ground.
    SingleEnded,
    /// A loop current (4–20 mA or another range) measured across a shunt.
    CurrentLoop,
    /// A voltage behind a very high impedance (MΩ … TΩ): ion-selective electrodes, piezo
    /// films, electret capsules without their own amplifier.
    HighImpedance,
    /// A photodiode's photocurrent, into a transimpedance stage.
    Photodiode,
    /// A two-wire signal riding on a common-mode level.
    Differential,
    /// A resistive bridge (strain gauges, load cells, pressure dies) on its excitation.
    Bridge,
}

impl SourceKind {
    /// The quantity of `source.min`/`max`: the measured quantity of this kind.
    pub fn quantity(self) -> Quantity {
        match self {
            SourceKind::SingleEnded | SourceKind::HighImpedance | SourceKind::Differential | SourceKind::Bridge => Quantity::Voltage,
            SourceKind::CurrentLoop | SourceKind::Photodiode => Quantity::Current,
        }
    }
}

/// Largest voltage a current loop allows across the measuring input when the request gives
/// none: a 250 Ω receiver at 20 mA (common practice for 4–20 mA inputs).
pub const DEFAULT_BURDEN_MAX: f64 = 5.0;
/// NAMUR NE 43 for a 4–20 mA loop: below 3.6 mA and above 21 mA the transmitter signals a
/// fault. For other ranges the same fractions of the span are used (−2.5 % and +6.25 %).
pub const NAMUR_FAULT_LOW: f64 = 3.6e-3;
pub const NAMUR_FAULT_HIGH: f64 = 21e-3;

/// The current-loop figures (`source.kind = "current_loop"`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LoopSpec {
    /// Largest voltage the loop allows across the measuring input, V.
    pub burden_max: f64,
    /// Below this current the transmitter signals a fault, A.
    pub fault_low: f64,
    /// Above this current the transmitter signals a fault, A.
    pub fault_high: f64,
}

/// The amplifier a differential pair or a bridge meets first (`source.front_end`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum FrontEnd {
    /// The design chooses: an instrumentation amplifier for a bridge, for a gain above 10 or
    /// for legs a difference amplifier would load; a difference amplifier otherwise.
    #[default]
    Auto,
    /// One amplifier with four resistors (the legs see its input resistors).
    Difference,
    /// Two input amplifiers and a difference stage (the legs see only amplifier inputs).
    Instrumentation,
}

impl FrontEnd {
    pub fn is_auto(&self) -> bool {
        *self == FrontEnd::Auto
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Coupling {
    Dc,
    Ac,
}

/// What the sensor produces.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Source {
    pub kind: SourceKind,
    /// Instantaneous extremes, DC level included (V).
    pub min: f64,
    pub max: f64,
    pub coupling: Coupling,
    /// The sensor's output (source) impedance, Ω.
    pub impedance: f64,
    /// Band of interest, Hz (`band_low` is 0 for DC coupling).
    pub band_low: f64,
    pub band_high: f64,
    /// What the sensor measures, for scaling converter codes back to it.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub measurand: Option<Measurand>,
    /// Current loops: burden and fault bands.
    #[serde(default, flatten, skip_serializing_if = "Option::is_none")]
    pub current_loop: Option<LoopSpec>,
    /// High-impedance sensors: the sensor's capacitance, F (DC coupling: electrode and cable
    /// to ground; AC coupling: the capacitance the signal sits behind).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub capacitance: Option<f64>,
    /// Photodiodes: the dark current, A (it adds to the photocurrent).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub dark_current: Option<f64>,
    /// Differential sensors: the range of the pair's common-mode level, V.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub common_mode_min: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub common_mode_max: Option<f64>,
    /// Differential pairs and bridges: the first amplifier (`auto` for other kinds).
    #[serde(default, skip_serializing_if = "FrontEnd::is_auto")]
    pub front_end: FrontEnd,
    /// Bridges: the excitation and the bridge itself.
    #[serde(default, flatten, skip_serializing_if = "Option::is_none")]
    pub bridge: Option<BridgeSpec>,
}

/// A resistive bridge (`source.kind = "bridge"`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BridgeSpec {
    /// Excitation across the bridge, V.
    pub excitation: f64,
    /// Output at full scale per volt of excitation, V/V (e.g. 2 mV/V = 0.002).
    pub sensitivity: f64,
    /// Resistance of each arm (and of the bridge across its excitation), Ω.
    pub bridge_resistance: f64,
    /// Arms that change with the measurand: 1, 2 or 4.
    pub active_arms: u32,
    /// The converter's reference is the bridge's excitation (ratiometric measurement).
    pub ratiometric: bool,
    /// The bridge's output with nothing to measure, as a fraction of its full-scale output (±).
    pub zero_balance: f64,
}

/// Zero balance assumed when the request gives none: ±2 % of the rated output, typical of
/// load cells and strain-gauge bridges (common practice; the bridge's datasheet governs).
pub const DEFAULT_ZERO_BALANCE: f64 = 0.02;

/// The physical quantity behind the sensor's output: `at_min` at `source.min`, `at_max` at
/// `source.max`, linear in between (e.g. pressure 0 … 600 kPa).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Measurand {
    pub name: String,
    pub unit: String,
    pub at_min: f64,
    pub at_max: f64,
}

/// The converter input.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Destination {
    pub min: f64,
    pub max: f64,
    pub bits: u32,
    pub sample_rate: f64,
    pub impedance: f64,
    /// Fraction of the span kept free at each end.
    pub headroom: f64,
    pub converter: ConverterKind,
    /// Oversampling converters: the modulator's sampling rate, Hz.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub modulator_rate: Option<f64>,
    /// Sampling converters: time the input is connected to the sampling capacitor, s.
    pub acquisition_time: f64,
    /// Sampling converters: the sampling capacitance, F.
    pub input_capacitance: f64,
    /// Largest current a fault may push into the converter's input protection, A.
    pub injection_limit: f64,
}

/// The parts at hand.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Parts {
    pub resistor_series: Series,
    pub resistor_tolerance: f64,
    pub capacitor_series: Series,
    pub capacitor_tolerance: f64,
    /// Practical resistor window (see [`crate::values`] for why 1 kΩ … 1 MΩ).
    pub resistor_min: f64,
    pub resistor_max: f64,
}

impl Default for Parts {
    fn default() -> Self {
        Parts {
            resistor_series: Series::E24,
            resistor_tolerance: 0.01,
            capacitor_series: Series::E6,
            capacitor_tolerance: 0.1,
            resistor_min: 1e3,
            resistor_max: 1e6,
        }
    }
}

/// Amplifier facts supplied by the user; every field is optional.
/// `swing_*` and `cm_*` are measured inward from the rail (negative = beyond the rail).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct AmplifierSpec {
    #[serde(skip_serializing_if = "Option::is_none")]
    pub gbw: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub slew_rate: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub swing_low: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub swing_high: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub cm_low: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub cm_high: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub supply_min: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub supply_max: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub offset: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub bias_current: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub noise_voltage: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub noise_current: Option<f64>,
    /// 1/f noise corner, Hz.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub noise_corner: Option<f64>,
    /// Open-loop DC gain, V/V.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub open_loop_gain: Option<f64>,
}

/// A malformed request: which field, and what is wrong with it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RequestError {
    /// Dotted path of the field, e.g. `source.band_low`; empty for the whole document.
    pub field: String,
    pub message: String,
}

impl fmt::Display for RequestError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if self.field.is_empty() {
            write!(f, "{}", self.message)
        } else {
            write!(f, "{}: {}", self.field, self.message)
        }
    }
}

impl std::error::Error for RequestError {}

impl Request {
    /// Reads and normalises a request from JSON text.
    pub fn from_json(text: &str) -> Result<Request, RequestError> {
        let value: Value = serde_json::from_str(text).map_err(|e| RequestError {
            field: String::new(),
            message: format!("not valid JSON ({e})"),
        })?;
        Request::from_value(&value)
    }

    /// Reads and normalises a request from a parsed JSON value.
    pub fn from_value(value: &Value) -> Result<Request, RequestError> {
        let top = Obj::new("", value)?;
        let version = match top.get("version") {
            None => CURRENT_VERSION,
            Some(v) => {
                let n = v.as_u64().ok_or_else(|| top.err("version", "must be a whole number such as 1"))?;
                if n == 0 || n > CURRENT_VERSION as u64 {
                    return Err(top.err(
                        "version",
                        &format!("this request is version {n}; this build of Rangefit reads versions 1 to {CURRENT_VERSION}"),
                    ));
                }
                n as u32
            }
        };
        let name = top.string("name")?.unwrap_or_else(|| "Untitled design".to_string());
        let notes = top.string("notes")?.unwrap_or_default();

        let dest_v = top.required("destination")?;
        let destination = read_destination(dest_v)?;
        let supplies = read_supplies(top.required("supplies")?)?;
        let src_v = top.required("source")?;
        let source = read_source(src_v, &destination, &supplies)?;
        let parts = match top.get("parts") {
            None => Parts::default(),
            Some(v) => read_parts(v)?,
        };
        let amplifier = match top.get("amplifier") {
            None | Some(Value::Null) => AmplifierSpec::default(),
            Some(v) => read_amplifier(v)?,
        };
        let keep_polarity = top.bool("keep_polarity")?.unwrap_or(true);
        let analysis = match top.get("analysis") {
            None => AnalysisOptions::default(),
            Some(v) => read_analysis(v)?,
        };
        let filter = match top.get("filter") {
            None => FilterSpec::default(),
            Some(v) => read_filter(v)?,
        };
        top.finish(&["version", "name", "notes", "source", "destination", "supplies", "parts", "amplifier", "keep_polarity", "analysis", "filter"])?;
        Ok(Request { version, name, notes, source, destination, supplies, parts, amplifier, keep_polarity, analysis, filter })
    }

    /// The normalised request as pretty JSON (the form `rangefit design` prints).
    pub fn to_json(&self) -> String {
        serde_json::to_string_pretty(self).unwrap_or_default()
    }
}

fn read_source(v: &Value, dest: &Destination, supplies: &[f64]) -> Result<Source, RequestError> {
    let o = Obj::new("source", v)?;
    let kind = match o.string("kind")?.as_deref() {
        None | Some("single_ended") => SourceKind::SingleEnded,
        Some("current_loop") => SourceKind::CurrentLoop,
        Some("high_impedance") => SourceKind::HighImpedance,
        Some("photodiode") => SourceKind::Photodiode,
        Some("differential") => SourceKind::Differential,
        Some("bridge") => SourceKind::Bridge,
        Some(other) => {
            return Err(o.err("kind", &format!("'{other}' is not a sensor kind this version designs for; use \"single_ended\", \"differential\", \"bridge\", \"current_loop\", \"high_impedance\" or \"photodiode\"")))
        }
    };
    let q = kind.quantity();
    let bridge = if kind == SourceKind::Bridge { Some(read_bridge(&o, supplies)?) } else { None };
    let (min, max) = match &bridge {
        // A bridge's range follows from its sensitivity unless given: 0 … S·V_exc.
        Some(b) => (o.q("min", q)?.unwrap_or(0.0), o.q("max", q)?.unwrap_or(b.sensitivity * b.excitation)),
        None => (o.required_q("min", q)?, o.required_q("max", q)?),
    };
    if max < min {
        return Err(o.err("max", &format!("{} is below source.min ({}); give the lower extreme as min", units::format(max, q), units::format(min, q))));
    }
    let current_loop = match kind {
        SourceKind::CurrentLoop => Some(read_loop(&o, min, max)?),
        _ => {
            for key in ["burden_max", "fault_low", "fault_high"] {
                if o.get(key).is_some() {
                    return Err(o.err(key, "applies only to a current loop (source.kind = \"current_loop\")"));
                }
            }
            None
        }
    };
    let coupling = match o.string("coupling")?.as_deref() {
        None | Some("dc") => Coupling::Dc,
        Some("ac") => Coupling::Ac,
        Some(other) => return Err(o.err("coupling", &format!("'{other}' is not a coupling; use \"dc\" or \"ac\""))),
    };
    let impedance = o.q("impedance", Quantity::Resistance)?.unwrap_or(0.0);
    if impedance < 0.0 {
        return Err(o.err("impedance", "must not be negative"));
    }
    let band_low = match (o.q("band_low", Quantity::Frequency)?, coupling) {
        (Some(f), _) => f,
        (None, Coupling::Dc) => 0.0,
        (None, Coupling::Ac) => {
            return Err(o.err("band_low", "is required for AC coupling: the lowest frequency that must pass, e.g. \"20 Hz\""))
        }
    };
    let band_high = o.q("band_high", Quantity::Frequency)?.unwrap_or(dest.sample_rate * DEFAULT_BAND_FRACTION_OF_FS);
    if band_low < 0.0 || band_high < 0.0 {
        return Err(o.err(if band_low < 0.0 { "band_low" } else { "band_high" }, "must not be negative"));
    }
    let measurand = match o.get("measurand") {
        None => None,
        Some(v) => Some(read_measurand(v)?),
    };
    let capacitance = o.q("capacitance", Quantity::Capacitance)?;
    match (kind, capacitance) {
        (SourceKind::HighImpedance, c) => {
            if !(impedance > 0.0) {
                return Err(o.err("impedance", "is required for a high-impedance sensor: its source resistance, e.g. \"1 GΩ\" for a glass electrode"));
            }
            if c.is_some_and(|c| !(c >= 0.0)) {
                return Err(o.err("capacitance", "must not be negative"));
            }
            if coupling == Coupling::Ac && !c.is_some_and(|c| c > 0.0) {
                return Err(o.err("capacitance", "is required for an AC-coupled high-impedance sensor: the capacitance its signal sits behind, e.g. \"1 nF\" for a piezo film"));
            }
        }
        (SourceKind::Photodiode, c) => {
            if !(min >= 0.0) {
                return Err(o.err("min", "a photocurrent runs one way: give 0 A ≤ min < max, e.g. 0 and \"10 µA\""));
            }
            if coupling == Coupling::Ac {
                return Err(o.err("coupling", "a photodiode is read with its DC level here; use \"dc\""));
            }
            if impedance != 0.0 {
                return Err(o.err("impedance", "does not apply to a photodiode: give its junction capacitance (capacitance) and dark current (dark_current)"));
            }
            if !c.is_some_and(|c| c > 0.0) {
                return Err(o.err("capacitance", "is required for a photodiode: its junction capacitance at the bias used, e.g. \"20 pF\""));
            }
        }
        (_, Some(_)) => return Err(o.err("capacitance", "applies only to high-impedance sensors and photodiodes")),
        _ => {}
    }
    let dark_current = o.q("dark_current", Quantity::Current)?;
    match (kind, dark_current) {
        (SourceKind::Photodiode, Some(d)) if !(d >= 0.0) => return Err(o.err("dark_current", "must not be negative")),
        (SourceKind::Photodiode, _) | (_, None) => {}
        (_, Some(_)) => return Err(o.err("dark_current", "applies only to a photodiode (source.kind = \"photodiode\")")),
    }
    let (cm_lo, cm_hi) = (o.q("common_mode_min", Quantity::Voltage)?, o.q("common_mode_max", Quantity::Voltage)?);
    let (common_mode_min, common_mode_max) = match kind {
        // A bridge's legs sit at half its excitation.
        SourceKind::Bridge => {
            let half = 0.5 * bridge.as_ref().map_or(0.0, |b| b.excitation);
            // The normalised request carries it: the same value reads back.
            if [cm_lo, cm_hi].iter().flatten().any(|v| (v - half).abs() > 1e-9 * half.abs().max(1.0)) {
                return Err(o.err("common_mode_min", "follows from the excitation for a bridge (half of it); leave it out"));
            }
            (Some(half), Some(half))
        }
        SourceKind::Differential => {
            if coupling == Coupling::Ac {
                return Err(o.err("coupling", "a differential sensor is taken with its DC level here; use \"dc\""));
            }
            let lo = cm_lo.or(cm_hi).unwrap_or(0.0);
            let hi = cm_hi.unwrap_or(lo);
            if hi < lo {
                return Err(o.err("common_mode_max", "is below common_mode_min; give the lower common-mode level as common_mode_min"));
            }
            (Some(lo), Some(hi))
        }
        _ => {
            if cm_lo.is_some() || cm_hi.is_some() {
                return Err(o.err(if cm_lo.is_some() { "common_mode_min" } else { "common_mode_max" }, "applies only to a differential sensor (source.kind = \"differential\")"));
            }
            (None, None)
        }
    };
    let front_end = match (o.string("front_end")?.as_deref(), kind) {
        (None | Some("auto"), _) => FrontEnd::Auto,
        (Some(_), k) if !matches!(k, SourceKind::Differential | SourceKind::Bridge) => {
            return Err(o.err("front_end", "applies only to a differential sensor or a bridge"));
        }
        (Some("difference"), _) => FrontEnd::Difference,
        (Some("instrumentation"), _) => FrontEnd::Instrumentation,
        (Some(other), _) => return Err(o.err("front_end", &format!("'{other}' is not a front end; use \"auto\", \"difference\" or \"instrumentation\""))),
    };
    o.finish(&["kind", "min", "max", "coupling", "impedance", "band_low", "band_high", "measurand", "burden_max", "fault_low", "fault_high", "capacitance", "dark_current", "common_mode_min", "common_mode_max", "front_end", "excitation", "sensitivity", "bridge_resistance", "active_arms", "ratiometric", "zero_balance"])?;
    if bridge.is_none() {
        for key in ["excitation", "sensitivity", "bridge_resistance", "active_arms", "ratiometric", "zero_balance"] {
            if o.get(key).is_some() {
                return Err(o.err(key, "applies only to a bridge (source.kind = \"bridge\")"));
            }
        }
    }
    Ok(Source { kind, min, max, coupling, impedance, band_low, band_high, measurand, current_loop, capacitance, dark_current, common_mode_min, common_mode_max, front_end, bridge })
}

/// The bridge fields of `source`.
fn read_bridge(o: &Obj, supplies: &[f64]) -> Result<BridgeSpec, RequestError> {
    // "supply": the bridge runs from the highest positive rail (the request keeps its value).
    let excitation = match o.get("excitation") {
        Some(Value::String(s)) if s.trim() == "supply" => supplies.iter().copied().filter(|v| *v > 0.0).fold(f64::NAN, f64::max),
        _ => o.required_q("excitation", Quantity::Voltage)?,
    };
    if !(excitation > 0.0) {
        return Err(o.err("excitation", "must be above 0 V, e.g. \"5 V\", or \"supply\" for the highest positive rail"));
    }
    let sensitivity = o.required_q("sensitivity", Quantity::Ratio)?;
    if !(sensitivity > 0.0 && sensitivity < 0.5) {
        return Err(o.err("sensitivity", "must be a full-scale output per volt of excitation between 0 and 0.5, e.g. 0.002 or \"2 m\" for 2 mV/V"));
    }
    let bridge_resistance = o.required_q("bridge_resistance", Quantity::Resistance)?;
    if !(bridge_resistance > 0.0) {
        return Err(o.err("bridge_resistance", "must be above 0 Ω, e.g. \"350\""));
    }
    let active_arms = match o.get("active_arms") {
        None => 4,
        Some(v) => match v.as_u64() {
            Some(n @ (1 | 2 | 4)) => n as u32,
            _ => return Err(o.err("active_arms", "must be 1, 2 or 4")),
        },
    };
    if o.q("impedance", Quantity::Resistance)?.is_some_and(|z| z != 0.0) {
        return Err(o.err("impedance", "follows from bridge_resistance for a bridge; leave it out"));
    }
    if o.string("coupling")?.as_deref() == Some("ac") {
        return Err(o.err("coupling", "a bridge is taken with its DC level here; use \"dc\""));
    }
    let ratiometric = o.bool("ratiometric")?.unwrap_or(false);
    let zero_balance = o.q("zero_balance", Quantity::Ratio)?.unwrap_or(DEFAULT_ZERO_BALANCE);
    if !(zero_balance >= 0.0 && zero_balance < 1.0) {
        return Err(o.err("zero_balance", "must be a fraction of the full-scale output from 0 to 1, e.g. \"2 %\""));
    }
    Ok(BridgeSpec { excitation, sensitivity, bridge_resistance, active_arms, ratiometric, zero_balance })
}

/// The current-loop fields of `source`; the loop current flows into the measuring input.
fn read_loop(o: &Obj, min: f64, max: f64) -> Result<LoopSpec, RequestError> {
    if !(min >= 0.0) || !(max > min) {
        return Err(o.err(if min < 0.0 { "min" } else { "max" }, "a loop current runs one way: give 0 A ≤ min < max, e.g. \"4 mA\" and \"20 mA\""));
    }
    if o.string("coupling")?.as_deref() == Some("ac") {
        return Err(o.err("coupling", "a current loop carries its measurement as DC; use \"dc\""));
    }
    // The normalised request carries impedance 0 and DC coupling: those read back.
    if o.q("impedance", Quantity::Resistance)?.is_some_and(|z| z != 0.0) {
        return Err(o.err("impedance", "does not apply to a current loop: the loop drives its current into the shunt whatever the shunt's value (within burden_max)"));
    }
    let burden_max = o.q("burden_max", Quantity::Voltage)?.unwrap_or(DEFAULT_BURDEN_MAX);
    if !(burden_max > 0.0) {
        return Err(o.err("burden_max", "must be above 0 V: the largest voltage the loop allows across the measuring input, e.g. \"5 V\""));
    }
    let span = max - min;
    let standard = (min - 4e-3).abs() < 1e-9 && (max - 20e-3).abs() < 1e-9;
    let (low, high) = if standard { (NAMUR_FAULT_LOW, NAMUR_FAULT_HIGH) } else { (min - 0.025 * span, max + 0.0625 * span) };
    let fault_low = o.q("fault_low", Quantity::Current)?.unwrap_or(low.max(0.0));
    let fault_high = o.q("fault_high", Quantity::Current)?.unwrap_or(high);
    if !(fault_low >= 0.0 && fault_low <= min) {
        return Err(o.err("fault_low", "must lie between 0 A and source.min: below it the transmitter signals a fault (NAMUR NE 43: 3.6 mA)"));
    }
    if !(fault_high >= max) {
        return Err(o.err("fault_high", "must be at least source.max: above it the transmitter signals a fault (NAMUR NE 43: 21 mA)"));
    }
    Ok(LoopSpec { burden_max, fault_low, fault_high })
}

fn read_measurand(v: &Value) -> Result<Measurand, RequestError> {
    let o = Obj::new("source.measurand", v)?;
    let name = o.string("name")?.filter(|s| !s.is_empty()).ok_or_else(|| o.err("name", "is required, e.g. \"pressure\""))?;
    let unit = o.string("unit")?.unwrap_or_default();
    let number = |key: &str| -> Result<f64, RequestError> {
        match o.get(key) {
            Some(Value::Number(n)) => n.as_f64().filter(|x| x.is_finite()).ok_or_else(|| o.err(key, "must be a finite number")),
            Some(other) => Err(o.err(key, &format!("expected a number in the measurand's unit, got {}", json_kind(other)))),
            None => Err(o.err(key, "is required: the measurand's value at the sensor's extreme")),
        }
    };
    let at_min = number("at_min")?;
    let at_max = number("at_max")?;
    if at_min == at_max {
        return Err(o.err("at_max", "must differ from at_min"));
    }
    o.finish(&["name", "unit", "at_min", "at_max"])?;
    Ok(Measurand { name, unit, at_min, at_max })
}

fn read_destination(v: &Value) -> Result<Destination, RequestError> {
    let o = Obj::new("destination", v)?;
    let min = o.required_q("min", Quantity::Voltage)?;
    let max = o.required_q("max", Quantity::Voltage)?;
    if max < min {
        return Err(o.err("max", "is below destination.min; give the converter's lower input limit as min"));
    }
    let bits = match o.get("bits") {
        None => DEFAULT_BITS,
        Some(b) => match b.as_u64() {
            Some(n) if (1..=32).contains(&n) => n as u32,
            _ => return Err(o.err("bits", "must be a whole number of bits from 1 to 32")),
        },
    };
    let sample_rate = o.required_q("sample_rate", Quantity::Frequency)?;
    if sample_rate <= 0.0 {
        return Err(o.err("sample_rate", "must be above 0 Hz"));
    }
    let impedance = o.q("impedance", Quantity::Resistance)?.unwrap_or(DEFAULT_DESTINATION_IMPEDANCE);
    if impedance <= 0.0 {
        return Err(o.err("impedance", "must be above 0 Ω"));
    }
    let headroom = o.q("headroom", Quantity::Ratio)?.unwrap_or(DEFAULT_HEADROOM);
    if !(0.0..0.45).contains(&headroom) {
        return Err(o.err("headroom", "must be a fraction from 0 to 0.45 of the span (e.g. 0.05 or \"5 %\")"));
    }
    let converter = match o.string("converter")?.as_deref() {
        None | Some("unknown") => ConverterKind::Unknown,
        Some("sar") => ConverterKind::Sar,
        Some("oversampling") => ConverterKind::Oversampling,
        Some(other) => return Err(o.err("converter", &format!("'{other}' is not a converter kind; use \"sar\", \"oversampling\" or \"unknown\""))),
    };
    let modulator_rate = o.q("modulator_rate", Quantity::Frequency)?;
    match (converter, modulator_rate) {
        (ConverterKind::Oversampling, None) => {
            return Err(o.err("modulator_rate", "is required for an oversampling converter: the rate its modulator samples at, e.g. \"3.072 MHz\""))
        }
        (ConverterKind::Oversampling, Some(f)) if f < 2.0 * sample_rate => {
            return Err(o.err("modulator_rate", "must be at least twice the sample rate (the modulator runs faster than the output data rate)"))
        }
        (kind, Some(_)) if kind != ConverterKind::Oversampling => {
            return Err(o.err("modulator_rate", "applies only to an oversampling converter (destination.converter = \"oversampling\")"))
        }
        _ => {}
    }
    let acquisition_time = o.q("acquisition_time", Quantity::Time)?.unwrap_or(DEFAULT_ACQUISITION_FRACTION / sample_rate);
    if !(acquisition_time > 0.0) || acquisition_time > 1.0 / sample_rate {
        return Err(o.err("acquisition_time", "must be above 0 s and no longer than one sample period"));
    }
    let input_capacitance = o.q("input_capacitance", Quantity::Capacitance)?.unwrap_or(DEFAULT_INPUT_CAPACITANCE);
    if !(input_capacitance > 0.0) || input_capacitance > 1e-6 {
        return Err(o.err("input_capacitance", "must be above 0 F and at most 1 µF (a converter's sampling capacitance, e.g. \"20 pF\")"));
    }
    let injection_limit = o.q("injection_limit", Quantity::Current)?.unwrap_or(DEFAULT_INJECTION_LIMIT);
    if !(injection_limit > 0.0) || injection_limit > 0.1 {
        return Err(o.err("injection_limit", "must be above 0 A and at most 100 mA (e.g. \"5 mA\", from the converter's datasheet)"));
    }
    o.finish(&["min", "max", "bits", "sample_rate", "impedance", "headroom", "converter", "modulator_rate", "acquisition_time", "input_capacitance", "injection_limit"])?;
    Ok(Destination { min, max, bits, sample_rate, impedance, headroom, converter, modulator_rate, acquisition_time, input_capacitance, injection_limit })
}

fn read_supplies(v: &Value) -> Result<Vec<f64>, RequestError> {
    let items: Vec<&Value> = match v {
        Value::Array(a) => a.iter().collect(),
        other => vec![other],
    };
    if items.is_empty() {
        return Err(field_err("supplies", "needs at least one rail, e.g. [3.3] or [12, -12]"));
    }
    let mut out = Vec::new();
    for (i, item) in items.iter().enumerate() {
        let path = format!("supplies[{i}]");
        let x = quantity(&path, item, Quantity::Voltage)?;
        if x == 0.0 {
            return Err(field_err(&path, "a rail of 0 V is ground, which is always available; list only the other rails"));
        }
        out.push(x);
    }
    if !out.iter().any(|&x| x > 0.0) {
        return Err(field_err("supplies", "needs a positive rail"));
    }
    Ok(out)
}

fn read_parts(v: &Value) -> Result<Parts, RequestError> {
    let mut o = Obj::new("parts", v)?;
    let d = Parts::default();
    let series = |o: &mut Obj, key: &str, default: Series| -> Result<Series, RequestError> {
        match o.string(key)? {
            None => Ok(default),
            Some(s) => Series::parse(&s).ok_or_else(|| o.err(key, &format!("'{s}' is not an IEC 60063 series; use one of E3, E6, E12, E24, E48, E96, E192"))),
        }
    };
    let resistor_series = series(&mut o, "resistor_series", d.resistor_series)?;
    let capacitor_series = series(&mut o, "capacitor_series", d.capacitor_series)?;
    let tol = |o: &mut Obj, key: &str, default: f64| -> Result<f64, RequestError> {
        let t = o.q(key, Quantity::Ratio)?.unwrap_or(default);
        if !(0.0..=0.5).contains(&t) {
            return Err(o.err(key, "must be a fraction from 0 to 0.5 (e.g. 0.01 or \"1 %\")"));
        }
        Ok(t)
    };
    let resistor_tolerance = tol(&mut o, "resistor_tolerance", d.resistor_tolerance)?;
    let capacitor_tolerance = tol(&mut o, "capacitor_tolerance", d.capacitor_tolerance)?;
    let resistor_min = o.q("resistor_min", Quantity::Resistance)?.unwrap_or(d.resistor_min);
    let resistor_max = o.q("resistor_max", Quantity::Resistance)?.unwrap_or(d.resistor_max);
    if resistor_min <= 0.0 || resistor_max < resistor_min * 10.0 {
        return Err(o.err("resistor_max", "the resistor window must span at least one decade above resistor_min (> 0 Ω)"));
    }
    o.finish(&["resistor_series", "resistor_tolerance", "capacitor_series", "capacitor_tolerance", "resistor_min", "resistor_max"])?;
    Ok(Parts { resistor_series, resistor_tolerance, capacitor_series, capacitor_tolerance, resistor_min, resistor_max })
}

fn read_amplifier(v: &Value) -> Result<AmplifierSpec, RequestError> {
    let o = Obj::new("amplifier", v)?;
    let mut a = AmplifierSpec {
        gbw: o.q("gbw", Quantity::Frequency)?,
        slew_rate: o.q("slew_rate", Quantity::SlewRate)?,
        swing_low: o.q("swing_low", Quantity::Voltage)?,
        swing_high: o.q("swing_high", Quantity::Voltage)?,
        cm_low: o.q("cm_low", Quantity::Voltage)?,
        cm_high: o.q("cm_high", Quantity::Voltage)?,
        supply_min: o.q("supply_min", Quantity::Voltage)?,
        supply_max: o.q("supply_max", Quantity::Voltage)?,
        offset: o.q("offset", Quantity::Voltage)?,
        bias_current: o.q("bias_current", Quantity::Current)?,
        noise_voltage: o.q("noise_voltage", Quantity::VoltageNoise)?,
        noise_current: o.q("noise_current", Quantity::CurrentNoise)?,
        noise_corner: o.q("noise_corner", Quantity::Frequency)?,
        open_loop_gain: o.q("open_loop_gain", Quantity::Ratio)?,
    };
    for (key, val) in [("gbw", a.gbw), ("slew_rate", a.slew_rate), ("supply_max", a.supply_max)] {
        if let Some(x) = val {
            if x <= 0.0 {
                return Err(o.err(key, "must be above 0"));
            }
        }
    }
    for (key, val) in [("noise_voltage", a.noise_voltage), ("noise_current", a.noise_current), ("noise_corner", a.noise_corner), ("supply_min", a.supply_min)] {
        if let Some(x) = val {
            if x < 0.0 {
                return Err(o.err(key, "must not be negative"));
            }
        }
    }
    if let Some(g) = a.open_loop_gain {
        if g < 10.0 {
            return Err(o.err("open_loop_gain", "must be at least 10 V/V (an amplifier's open-loop gain, e.g. 1e5)"));
        }
    }
    // Negative offsets and bias currents describe the same spread as positive ones.
    a.offset = a.offset.map(f64::abs);
    a.bias_current = a.bias_current.map(f64::abs);
    o.finish(&[
        "gbw", "slew_rate", "swing_low", "swing_high", "cm_low", "cm_high", "supply_min", "supply_max", "offset",
        "bias_current", "noise_voltage", "noise_current", "noise_corner", "open_loop_gain",
    ])?;
    Ok(a)
}

fn read_analysis(v: &Value) -> Result<AnalysisOptions, RequestError> {
    let o = Obj::new("analysis", v)?;
    let d = AnalysisOptions::default();
    let whole = |key: &str, default: u64, max: u64| -> Result<u64, RequestError> {
        match o.get(key) {
            None => Ok(default),
            Some(x) => match x.as_u64() {
                Some(n) if n <= max => Ok(n),
                _ => Err(o.err(key, &format!("must be a whole number from 0 to {max}"))),
            },
        }
    };
    let monte_carlo_runs = whole("monte_carlo_runs", d.monte_carlo_runs as u64, 1_000_000)? as usize;
    let seed = whole("seed", d.seed, u64::MAX)?;
    let temperature = o.q("temperature", Quantity::Temperature)?.unwrap_or(d.temperature);
    if temperature <= 0.0 {
        return Err(o.err("temperature", "must be above 0 K"));
    }
    o.finish(&["monte_carlo_runs", "seed", "temperature"])?;
    Ok(AnalysisOptions { monte_carlo_runs, seed, temperature })
}

fn read_filter(v: &Value) -> Result<FilterSpec, RequestError> {
    let o = Obj::new("filter", v)?;
    let d = FilterSpec::default();
    let response = match o.string("response")?.as_deref() {
        None | Some("flat") => ResponseKind::Flat,
        Some("linear_phase") => ResponseKind::LinearPhase,
        Some("steep") => ResponseKind::Steep,
        Some("none") => ResponseKind::None,
        Some(other) => return Err(o.err("response", &format!("'{other}' is not a response; use \"flat\", \"linear_phase\", \"steep\" or \"none\""))),
    };
    let whole = |key: &str| -> Result<Option<u32>, RequestError> {
        match o.get(key) {
            None => Ok(None),
            Some(x) => match x.as_u64() {
                Some(n) if (1..=ORDER_LIMIT as u64).contains(&n) => Ok(Some(n as u32)),
                _ => Err(o.err(key, &format!("must be a whole number from 1 to {ORDER_LIMIT}"))),
            },
        }
    };
    let order = whole("order")?;
    let max_order = whole("max_order")?.unwrap_or(d.max_order);
    if let Some(n) = order {
        if n > max_order {
            return Err(o.err("order", &format!("{n} is above max_order ({max_order}); raise max_order or lower the order")));
        }
    }
    let topology = match o.string("topology")?.as_deref() {
        None | Some("sallen_key") => FilterTopology::SallenKey,
        Some("multiple_feedback") => FilterTopology::MultipleFeedback,
        Some(other) => return Err(o.err("topology", &format!("'{other}' is not a filter topology; use \"sallen_key\" or \"multiple_feedback\""))),
    };
    let passband_error = match o.get("passband_error") {
        // The steep response's own ripple is its passband error.
        None if response == ResponseKind::Steep => STEEP_PASSBAND_ERROR_DB,
        None => d.passband_error,
        Some(x) => decibels(&o.path_of("passband_error"), x)?.abs(),
    };
    if !(passband_error > 0.0 && passband_error <= 3.0) {
        return Err(o.err("passband_error", "must be above 0 dB and at most 3 dB (e.g. 0.1 or \"0.1 dB\")"));
    }
    let out_of_band_level = match o.get("out_of_band_level") {
        None => d.out_of_band_level,
        Some(Value::String(s)) if is_decibels(s) => {
            let db = decibels(&o.path_of("out_of_band_level"), &Value::String(s.clone()))?;
            if db > 0.0 {
                return Err(o.err("out_of_band_level", "in dB it is relative to full scale and must not be above 0 dB (e.g. \"-40 dB\")"));
            }
            10f64.powf(db / 20.0)
        }
        Some(x) => quantity(&o.path_of("out_of_band_level"), x, Quantity::Ratio)?,
    };
    if !(out_of_band_level > 0.0 && out_of_band_level <= 1.0) {
        return Err(o.err("out_of_band_level", "must be a fraction of full scale above 0 and at most 1 (e.g. 0.01, \"1 %\" or \"-40 dB\")"));
    }
    o.finish(&["response", "order", "max_order", "topology", "passband_error", "out_of_band_level"])?;
    Ok(FilterSpec { response, order, max_order, topology, passband_error, out_of_band_level })
}

fn is_decibels(s: &str) -> bool {
    let t = s.trim().to_ascii_lowercase();
    t.ends_with("db") || t.ends_with("dbfs")
}

/// A level in decibels: a plain number, or a string ending in `dB` (or `dBFS`).
fn decibels(path: &str, v: &Value) -> Result<f64, RequestError> {
    let x = match v {
        Value::Number(n) => n.as_f64(),
        Value::String(s) => {
            let t = s.trim();
            let lower = t.to_ascii_lowercase();
            let body = lower.strip_suffix("dbfs").or_else(|| lower.strip_suffix("db")).unwrap_or(&lower);
            body.trim().replace('−', "-").parse::<f64>().ok()
        }
        other => return Err(field_err(path, &format!("expected a level in dB as a number or a string such as \"0.1 dB\", got {}", json_kind(other)))),
    };
    match x {
        Some(x) if x.is_finite() => Ok(x),
        _ => Err(field_err(path, "is not a level in dB (e.g. 0.1 or \"0.1 dB\")")),
    }
}

fn field_err(field: &str, message: &str) -> RequestError {
    RequestError { field: field.to_string(), message: message.to_string() }
}

/// Reads one physical value: a JSON number in SI base units or a string with a unit.
fn quantity(path: &str, v: &Value, q: Quantity) -> Result<f64, RequestError> {
    let r = match v {
        Value::Number(n) => match n.as_f64() {
            Some(x) => units::parse_number(x, q),
            None => return Err(field_err(path, "number out of range")),
        },
        Value::String(s) => units::parse(s, q),
        other => {
            return Err(field_err(
                path,
                &format!("expected a {} as a number or a string with a unit, got {}", q.name(), json_kind(other)),
            ))
        }
    };
    r.map_err(|e| field_err(path, &e.to_string()))
}

fn json_kind(v: &Value) -> &'static str {
    match v {
        Value::Null => "null",
        Value::Bool(_) => "true/false",
        Value::Number(_) => "a number",
        Value::String(_) => "text",
        Value::Array(_) => "a list",
        Value::Object(_) => "an object",
    }
}

/// A JSON object being read, with the path used in error messages.
struct Obj<'a> {
    path: String,
    map: &'a Map<String, Value>,
}

impl<'a> Obj<'a> {
    fn new(path: &str, v: &'a Value) -> Result<Obj<'a>, RequestError> {
        match v {
            Value::Object(map) => Ok(Obj { path: path.to_string(), map }),
            other => Err(field_err(
                if path.is_empty() { "" } else { path },
                &format!("expected an object {{…}}, got {}", json_kind(other)),
            )),
        }
    }
    fn path_of(&self, key: &str) -> String {
        if self.path.is_empty() {
            key.to_string()
        } else {
            format!("{}.{}", self.path, key)
        }
    }
    fn err(&self, key: &str, message: &str) -> RequestError {
        field_err(&self.path_of(key), message)
    }
    fn get(&self, key: &str) -> Option<&'a Value> {
        self.map.get(key).filter(|v| !v.is_null())
    }
    fn required(&self, key: &str) -> Result<&'a Value, RequestError> {
        self.get(key).ok_or_else(|| self.err(key, "is required"))
    }
    fn q(&self, key: &str, q: Quantity) -> Result<Option<f64>, RequestError> {
        match self.get(key) {
            None => Ok(None),
            Some(Value::String(s)) if s.trim().is_empty() => Ok(None),
            Some(v) => quantity(&self.path_of(key), v, q).map(Some),
        }
    }
    fn required_q(&self, key: &str, q: Quantity) -> Result<f64, RequestError> {
        self.q(key, q)?.ok_or_else(|| self.err(key, &format!("is required (a {})", q.name())))
    }
    fn string(&self, key: &str) -> Result<Option<String>, RequestError> {
        match self.get(key) {
            None => Ok(None),
            Some(Value::String(s)) => Ok(Some(s.trim().to_string())),
            Some(other) => Err(self.err(key, &format!("expected text, got {}", json_kind(other)))),
        }
    }
    fn bool(&self, key: &str) -> Result<Option<bool>, RequestError> {
        match self.get(key) {
            None => Ok(None),
            Some(Value::Bool(b)) => Ok(Some(*b)),
            Some(other) => Err(self.err(key, &format!("expected true or false, got {}", json_kind(other)))),
        }
    }
    /// Rejects fields this version does not know, so a typo is not silently ignored.
    fn finish(&self, known: &[&str]) -> Result<(), RequestError> {
        for key in self.map.keys() {
            if !known.contains(&key.as_str()) {
                return Err(self.err(key, &format!("unknown field; known fields here are: {}", known.join(", "))));
            }
        }
        Ok(())
    }
}
