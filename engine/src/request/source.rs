//! The sensor side of a request (`source`): the kinds of sensor, the source itself, a current
//! loop's and a bridge's figures, the measurand behind the output, and their readers.

use serde::{Deserialize, Serialize};
use serde_json::Value;

use super::json::{json_kind, Obj};
use super::{Destination, RequestError};
use crate::units::{self, Quantity};

/// When `band_high` is absent it defaults to this fraction of the sample rate.
pub const DEFAULT_BAND_FRACTION_OF_FS: f64 = 0.1;

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
            SourceKind::SingleEnded | SourceKind::HighImpedance | SourceKind::Differential | SourceKind::Bridge => {
                Quantity::Voltage
            }
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

impl Source {
    /// The band's geometric centre, √(band_low·band_high), Hz (0 when `band_low` is 0).
    pub fn band_centre(&self) -> f64 {
        (self.band_low * self.band_high).sqrt()
    }

    /// Where the mid-band gain is read, Hz: the band's geometric centre for AC coupling,
    /// DC (0 Hz) for DC coupling.
    pub fn mid_band(&self) -> f64 {
        match self.coupling {
            Coupling::Ac => self.band_centre(),
            Coupling::Dc => 0.0,
        }
    }
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

pub(super) fn read_source(v: &Value, dest: &Destination, supplies: &[f64]) -> Result<Source, RequestError> {
    let o = Obj::new("source", v)?;
    let kind = match o.string("kind")?.as_deref() {
        None | Some("single_ended") => SourceKind::SingleEnded,
        Some("current_loop") => SourceKind::CurrentLoop,
        Some("high_impedance") => SourceKind::HighImpedance,
        Some("photodiode") => SourceKind::Photodiode,
        Some("differential") => SourceKind::Differential,
        Some("bridge") => SourceKind::Bridge,
        Some(other) => {
            return Err(o.err(
                "kind",
                &format!(
                    "'{other}' is not a sensor kind this version designs for; use \
                \"single_ended\", \"differential\", \"bridge\", \"current_loop\", \"high_impedance\" or \
                \"photodiode\""
                ),
            ))
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
        return Err(o.err(
            "max",
            &format!(
                "{} is below source.min ({}); give the lower extreme as min",
                units::format(max, q),
                units::format(min, q)
            ),
        ));
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
            return Err(
                o.err("band_low", "is required for AC coupling: the lowest frequency that must pass, e.g. \"20 Hz\"")
            )
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
                return Err(o.err(
                    "impedance",
                    "is required for a high-impedance sensor: its source resistance, e.g. \
                    \"1 GΩ\" for a glass electrode",
                ));
            }
            if c.is_some_and(|c| !(c >= 0.0)) {
                return Err(o.err("capacitance", "must not be negative"));
            }
            if coupling == Coupling::Ac && !c.is_some_and(|c| c > 0.0) {
                return Err(o.err(
                    "capacitance",
                    "is required for an AC-coupled high-impedance sensor: the capacitance \
                    its signal sits behind, e.g. \"1 nF\" for a piezo film",
                ));
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
                return Err(o.err(
                    "impedance",
                    "does not apply to a photodiode: give its junction capacitance \
                    (capacitance) and dark current (dark_current)",
                ));
            }
            if !c.is_some_and(|c| c > 0.0) {
                return Err(o.err(
                    "capacitance",
                    "is required for a photodiode: its junction capacitance at the bias used, e.g. \"20 pF\"",
                ));
            }
        }
        (_, Some(_)) => return Err(o.err("capacitance", "applies only to high-impedance sensors and photodiodes")),
        _ => {}
    }
    let dark_current = o.q("dark_current", Quantity::Current)?;
    match (kind, dark_current) {
        (SourceKind::Photodiode, Some(d)) if !(d >= 0.0) => return Err(o.err("dark_current", "must not be negative")),
        (SourceKind::Photodiode, _) | (_, None) => {}
        (_, Some(_)) => {
            return Err(o.err("dark_current", "applies only to a photodiode (source.kind = \"photodiode\")"))
        }
    }
    let (cm_lo, cm_hi) = (o.q("common_mode_min", Quantity::Voltage)?, o.q("common_mode_max", Quantity::Voltage)?);
    let (common_mode_min, common_mode_max) = match kind {
        // A bridge's legs sit at half its excitation.
        SourceKind::Bridge => {
            let half = 0.5 * bridge.as_ref().map_or(0.0, |b| b.excitation);
            // The normalised request carries it: the same value reads back.
            if [cm_lo, cm_hi].iter().flatten().any(|v| (v - half).abs() > 1e-9 * half.abs().max(1.0)) {
                return Err(
                    o.err("common_mode_min", "follows from the excitation for a bridge (half of it); leave it out")
                );
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
                return Err(o.err(
                    "common_mode_max",
                    "is below common_mode_min; give the lower common-mode level as common_mode_min",
                ));
            }
            (Some(lo), Some(hi))
        }
        _ => {
            if cm_lo.is_some() || cm_hi.is_some() {
                return Err(o.err(
                    if cm_lo.is_some() { "common_mode_min" } else { "common_mode_max" },
                    "applies only to a differential sensor (source.kind = \"differential\")",
                ));
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
        (Some(other), _) => {
            return Err(o.err(
                "front_end",
                &format!("'{other}' is not a front end; use \"auto\", \"difference\" or \"instrumentation\""),
            ))
        }
    };
    o.finish(&[
        "kind",
        "min",
        "max",
        "coupling",
        "impedance",
        "band_low",
        "band_high",
        "measurand",
        "burden_max",
        "fault_low",
        "fault_high",
        "capacitance",
        "dark_current",
        "common_mode_min",
        "common_mode_max",
        "front_end",
        "excitation",
        "sensitivity",
        "bridge_resistance",
        "active_arms",
        "ratiometric",
        "zero_balance",
    ])?;
    if bridge.is_none() {
        for key in ["excitation", "sensitivity", "bridge_resistance", "active_arms", "ratiometric", "zero_balance"] {
            if o.get(key).is_some() {
                return Err(o.err(key, "applies only to a bridge (source.kind = \"bridge\")"));
            }
        }
    }
    Ok(Source {
        kind,
        min,
        max,
        coupling,
        impedance,
        band_low,
        band_high,
        measurand,
        current_loop,
        capacitance,
        dark_current,
        common_mode_min,
        common_mode_max,
        front_end,
        bridge,
    })
}

/// The bridge fields of `source`.
fn read_bridge(o: &Obj, supplies: &[f64]) -> Result<BridgeSpec, RequestError> {
    // "supply": the bridge runs from the highest positive rail (the request keeps its value).
    let excitation = match o.get("excitation") {
        Some(Value::String(s)) if s.trim() == "supply" => {
            supplies.iter().copied().filter(|v| *v > 0.0).fold(f64::NAN, f64::max)
        }
        _ => o.required_q("excitation", Quantity::Voltage)?,
    };
    if !(excitation > 0.0) {
        return Err(o.err("excitation", "must be above 0 V, e.g. \"5 V\", or \"supply\" for the highest positive rail"));
    }
    let sensitivity = o.required_q("sensitivity", Quantity::Ratio)?;
    if !(sensitivity > 0.0 && sensitivity < 0.5) {
        return Err(o.err(
            "sensitivity",
            "must be a full-scale output per volt of excitation between 0 and 0.5, e.g. 0.002 or \"2 m\" for 2 mV/V",
        ));
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
    if !(0.0..1.0).contains(&zero_balance) {
        return Err(o.err("zero_balance", "must be a fraction of the full-scale output from 0 to 1, e.g. \"2 %\""));
    }
    Ok(BridgeSpec { excitation, sensitivity, bridge_resistance, active_arms, ratiometric, zero_balance })
}

/// The current-loop fields of `source`; the loop current flows into the measuring input.
fn read_loop(o: &Obj, min: f64, max: f64) -> Result<LoopSpec, RequestError> {
    if !(min >= 0.0) || !(max > min) {
        return Err(o.err(
            if min < 0.0 { "min" } else { "max" },
            "a loop current runs one way: give 0 A ≤ min < max, e.g. \"4 mA\" and \"20 mA\"",
        ));
    }
    if o.string("coupling")?.as_deref() == Some("ac") {
        return Err(o.err("coupling", "a current loop carries its measurement as DC; use \"dc\""));
    }
    // The normalised request carries impedance 0 and DC coupling: those read back.
    if o.q("impedance", Quantity::Resistance)?.is_some_and(|z| z != 0.0) {
        return Err(o.err(
            "impedance",
            "does not apply to a current loop: the loop drives its current into the shunt \
            whatever the shunt's value (within burden_max)",
        ));
    }
    let burden_max = o.q("burden_max", Quantity::Voltage)?.unwrap_or(DEFAULT_BURDEN_MAX);
    if !(burden_max > 0.0) {
        return Err(o.err(
            "burden_max",
            "must be above 0 V: the largest voltage the loop allows across the measuring input, e.g. \"5 V\"",
        ));
    }
    let span = max - min;
    let standard = (min - 4e-3).abs() < 1e-9 && (max - 20e-3).abs() < 1e-9;
    let (low, high) =
        if standard { (NAMUR_FAULT_LOW, NAMUR_FAULT_HIGH) } else { (min - 0.025 * span, max + 0.0625 * span) };
    let fault_low = o.q("fault_low", Quantity::Current)?.unwrap_or(low.max(0.0));
    let fault_high = o.q("fault_high", Quantity::Current)?.unwrap_or(high);
    if !(fault_low >= 0.0 && fault_low <= min) {
        return Err(o.err(
            "fault_low",
            "must lie between 0 A and source.min: below it the transmitter signals a fault (NAMUR NE 43: 3.6 mA)",
        ));
    }
    if !(fault_high >= max) {
        return Err(o.err(
            "fault_high",
            "must be at least source.max: above it the transmitter signals a fault (NAMUR NE 43: 21 mA)",
        ));
    }
    Ok(LoopSpec { burden_max, fault_low, fault_high })
}

/// Largest magnitude of a measurand's value the scaling takes.
const MEASURAND_LIMIT: f64 = 1e15;

fn read_measurand(v: &Value) -> Result<Measurand, RequestError> {
    let o = Obj::new("source.measurand", v)?;
    let name =
        o.string("name")?.filter(|s| !s.is_empty()).ok_or_else(|| o.err("name", "is required, e.g. \"pressure\""))?;
    let unit = o.string("unit")?.unwrap_or_default();
    let number = |key: &str| -> Result<f64, RequestError> {
        match o.get(key) {
            Some(Value::Number(n)) => {
                n.as_f64().filter(|x| x.is_finite()).ok_or_else(|| o.err(key, "must be a finite number"))
            }
            Some(other) => {
                Err(o.err(key, &format!("expected a number in the measurand's unit, got {}", json_kind(other))))
            }
            None => Err(o.err(key, "is required: the measurand's value at the sensor's extreme")),
        }
    };
    let at_min = number("at_min")?;
    let at_max = number("at_max")?;
    // Beyond this the scaling's slope and intercept overflow (our rule: 10¹⁵ covers every
    // engineering unit with room to spare).
    for (key, x) in [("at_min", at_min), ("at_max", at_max)] {
        if x.abs() > MEASURAND_LIMIT {
            return Err(o.err(key, "must lie within ±1e15 in the measurand's unit (choose a larger unit)"));
        }
    }
    if at_min == at_max {
        return Err(o.err("at_max", "must differ from at_min"));
    }
    o.finish(&["name", "unit", "at_min", "at_max"])?;
    Ok(Measurand { name, unit, at_min, at_max })
}
