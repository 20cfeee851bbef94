//! The converter side of a request (`destination` and `filter`): the converter input, its
//! kind, the anti-alias filter wanted, their defaults and their readers.

use serde::{Deserialize, Serialize};
use serde_json::Value;

use super::json::{decibels, is_decibels, quantity, Obj};
use super::RequestError;
use crate::units::Quantity;

/// Default headroom: 5 % of the converter span kept free at each end, enough to absorb
/// rounding to standard values plus 1 % resistor and amplifier offset errors (common practice).
pub const DEFAULT_HEADROOM: f64 = 0.05;
/// Default converter input impedance when none is given: a high-impedance input (1 MΩ).
pub const DEFAULT_DESTINATION_IMPEDANCE: f64 = 1e6;
/// Default resolution when none is given.
pub const DEFAULT_BITS: u32 = 12;

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

/// Default initial tolerance of the converter's reference, as a fraction (a dedicated voltage
/// reference of the usual grades, common practice; the reference's datasheet governs).
pub const DEFAULT_REFERENCE_TOLERANCE: f64 = 1e-3;

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
    /// The share of `passband_error` the rest of the chain takes at `band_high` (front end,
    /// gain stage, amplifier gain-bandwidth), dB; the filter is designed for what is left.
    /// Set by the design pipeline when it measures the built chain; never part of a request.
    #[serde(skip)]
    pub chain_droop_db: f64,
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
            chain_droop_db: 0.0,
        }
    }
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
    /// The converter's reference voltage, V (`None`: the larger magnitude of `min` and `max`;
    /// a ratiometric converter's reference is the positive rail).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reference_voltage: Option<f64>,
    /// Its initial tolerance, as a fraction (a ratiometric converter's is the rail's).
    pub reference_tolerance: f64,
    /// The reference is brought out as a pin the circuit may take its levels from.
    #[serde(default)]
    pub reference_pin: bool,
    /// The converter's reference is the positive rail, so its readings are ratiometric to it.
    #[serde(default)]
    pub ratiometric: bool,
}

impl Destination {
    /// The rate the converter's input is sampled at: the sample rate for a sampling
    /// converter, the modulator's rate for an oversampling one (the sample rate when it
    /// is not given).
    pub fn input_rate(&self) -> f64 {
        if self.converter.samples() {
            self.sample_rate
        } else {
            self.modulator_rate.unwrap_or(self.sample_rate)
        }
    }

    /// The first frequency that folds onto a band reaching `band_high`: the input rate
    /// minus `band_high`. `None` when it does not lie above the band (or the band is empty).
    pub fn folding_frequency(&self, band_high: f64) -> Option<f64> {
        let f = self.input_rate() - band_high;
        (f.is_finite() && f > band_high && band_high > 0.0).then_some(f)
    }

    /// The number of codes, 2^bits.
    pub fn levels(&self) -> f64 {
        levels_of(self.bits)
    }

    /// One LSB of the converter's input span, V.
    pub fn lsb(&self) -> f64 {
        lsb_of(self.max - self.min, self.bits)
    }

    /// The converter's reference voltage on nominal rails (`rail_pos`: the positive rail a
    /// ratiometric converter uses), V.
    pub fn reference(&self, rail_pos: f64) -> f64 {
        if self.ratiometric {
            rail_pos
        } else {
            self.reference_voltage.unwrap_or(self.min.abs().max(self.max.abs()))
        }
    }
}

/// The number of codes of a `bits`-bit converter, 2^bits.
pub fn levels_of(bits: u32) -> f64 {
    2f64.powi(bits as i32)
}

/// One LSB of a converter with input span `span` (V) and `bits` bits: span / 2^bits.
pub fn lsb_of(span: f64, bits: u32) -> f64 {
    span / levels_of(bits)
}

/// Full dynamic range (the SNR for a full-scale sine) of an ideal `bits`-bit converter,
/// 20·log10(2^N·√1.5) ≈ 6.02·N + 1.76 dB.
pub fn full_range_db(bits: u32) -> f64 {
    20.0 * (levels_of(bits) * 1.5f64.sqrt()).log10()
}

pub(super) fn read_destination(v: &Value) -> Result<Destination, RequestError> {
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
        Some(other) => {
            return Err(o.err(
                "converter",
                &format!("'{other}' is not a converter kind; use \"sar\", \"oversampling\" or \"unknown\""),
            ))
        }
    };
    let modulator_rate = o.q("modulator_rate", Quantity::Frequency)?;
    match (converter, modulator_rate) {
        (ConverterKind::Oversampling, None) => {
            return Err(o.err(
                "modulator_rate",
                "is required for an oversampling converter: the rate its modulator samples at, e.g. \"3.072 MHz\"",
            ))
        }
        (ConverterKind::Oversampling, Some(f)) if f < 2.0 * sample_rate => {
            return Err(o.err(
                "modulator_rate",
                "must be at least twice the sample rate (the modulator runs faster than the output data rate)",
            ))
        }
        (kind, Some(_)) if kind != ConverterKind::Oversampling => {
            return Err(o.err(
                "modulator_rate",
                "applies only to an oversampling converter (destination.converter = \"oversampling\")",
            ))
        }
        _ => {}
    }
    let acquisition_time =
        o.q("acquisition_time", Quantity::Time)?.unwrap_or(DEFAULT_ACQUISITION_FRACTION / sample_rate);
    if !(acquisition_time > 0.0) || acquisition_time > 1.0 / sample_rate {
        return Err(o.err("acquisition_time", "must be above 0 s and no longer than one sample period"));
    }
    let input_capacitance = o.q("input_capacitance", Quantity::Capacitance)?.unwrap_or(DEFAULT_INPUT_CAPACITANCE);
    if !(input_capacitance > 0.0) || input_capacitance > 1e-6 {
        return Err(o.err(
            "input_capacitance",
            "must be above 0 F and at most 1 µF (a converter's sampling capacitance, e.g. \"20 pF\")",
        ));
    }
    let injection_limit = o.q("injection_limit", Quantity::Current)?.unwrap_or(DEFAULT_INJECTION_LIMIT);
    if !(injection_limit > 0.0) || injection_limit > 0.1 {
        return Err(o.err(
            "injection_limit",
            "must be above 0 A and at most 100 mA (e.g. \"5 mA\", from the converter's datasheet)",
        ));
    }
    let ratiometric = o.bool("ratiometric")?.unwrap_or(false);
    let reference_voltage = o.q("reference_voltage", Quantity::Voltage)?;
    let reference_tolerance = o.q("reference_tolerance", Quantity::Ratio)?;
    let reference_pin = o.bool("reference_pin")?.unwrap_or(false);
    if ratiometric {
        let why = "does not apply to a ratiometric converter: its reference is the positive rail (clear ratiometric \
            to give the reference's own figure)";
        for (set, key) in [
            (reference_voltage.is_some(), "reference_voltage"),
            (reference_tolerance.is_some(), "reference_tolerance"),
            (reference_pin, "reference_pin"),
        ] {
            if set {
                return Err(o.err(key, why));
            }
        }
    }
    if let Some(v) = reference_voltage {
        if !(v > 0.0) || v < 0.5 * min.abs().max(max.abs()) {
            return Err(o.err(
                "reference_voltage",
                "must be above 0 V and at least half the converter's largest input (e.g. \"2.5 V\" for a 0 … 2.5 V \
                    input)",
            ));
        }
    }
    let reference_tolerance = reference_tolerance.unwrap_or(DEFAULT_REFERENCE_TOLERANCE);
    if !(0.0..0.2).contains(&reference_tolerance) {
        return Err(o.err("reference_tolerance", "must be a fraction from 0 to 0.2 (e.g. \"0.1 %\")"));
    }
    o.finish(&[
        "min",
        "max",
        "bits",
        "sample_rate",
        "impedance",
        "headroom",
        "converter",
        "modulator_rate",
        "acquisition_time",
        "input_capacitance",
        "injection_limit",
        "reference_voltage",
        "reference_tolerance",
        "reference_pin",
        "ratiometric",
    ])?;
    Ok(Destination {
        min,
        max,
        bits,
        sample_rate,
        impedance,
        headroom,
        converter,
        modulator_rate,
        acquisition_time,
        input_capacitance,
        injection_limit,
        reference_voltage,
        reference_tolerance,
        reference_pin,
        ratiometric,
    })
}

pub(super) fn read_filter(v: &Value) -> Result<FilterSpec, RequestError> {
    let o = Obj::new("filter", v)?;
    let d = FilterSpec::default();
    let response = match o.string("response")?.as_deref() {
        None | Some("flat") => ResponseKind::Flat,
        Some("linear_phase") => ResponseKind::LinearPhase,
        Some("steep") => ResponseKind::Steep,
        Some("none") => ResponseKind::None,
        Some(other) => {
            return Err(o.err(
                "response",
                &format!("'{other}' is not a response; use \"flat\", \"linear_phase\", \"steep\" or \"none\""),
            ))
        }
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
            return Err(
                o.err("order", &format!("{n} is above max_order ({max_order}); raise max_order or lower the order"))
            );
        }
    }
    let topology = match o.string("topology")?.as_deref() {
        None | Some("sallen_key") => FilterTopology::SallenKey,
        Some("multiple_feedback") => FilterTopology::MultipleFeedback,
        Some(other) => {
            return Err(o.err(
                "topology",
                &format!("'{other}' is not a filter topology; use \"sallen_key\" or \"multiple_feedback\""),
            ))
        }
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
                return Err(o.err(
                    "out_of_band_level",
                    "in dB it is relative to full scale and must not be above 0 dB (e.g. \"-40 dB\")",
                ));
            }
            10f64.powf(db / 20.0)
        }
        Some(x) => quantity(&o.path_of("out_of_band_level"), x, Quantity::Ratio)?,
    };
    if !(out_of_band_level > 0.0 && out_of_band_level <= 1.0) {
        return Err(o.err(
            "out_of_band_level",
            "must be a fraction of full scale above 0 and at most 1 (e.g. 0.01, \"1 %\" or \"-40 dB\")",
        ));
    }
    o.finish(&["response", "order", "max_order", "topology", "passband_error", "out_of_band_level"])?;
    Ok(FilterSpec { response, order, max_order, topology, passband_error, out_of_band_level, chain_droop_db: 0.0 })
}
