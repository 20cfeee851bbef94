//! The parts at hand, the amplifier facts the user knows and the analysis options of a
//! request (`parts`, `amplifier`, `analysis`), with their readers.

use serde::{Deserialize, Serialize};
use serde_json::Value;

use super::json::{decibels, is_decibels, Obj};
use super::RequestError;
use crate::units::Quantity;
use crate::values::Series;

/// The figures an amplifier may be given by (the keys of `amplifier`), in the order they are
/// read, listed once for the reader, the page's inputs and the report.
pub const AMPLIFIER_FIGURES: [&str; 15] = [
    "gbw",
    "slew_rate",
    "swing_low",
    "swing_high",
    "cm_low",
    "cm_high",
    "supply_min",
    "supply_max",
    "offset",
    "bias_current",
    "noise_voltage",
    "noise_current",
    "noise_corner",
    "open_loop_gain",
    "supply_rejection",
];

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
    /// Supply rejection (input offset change per volt of supply change, as a ratio), V/V.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub supply_rejection: Option<f64>,
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

pub(super) fn read_parts(v: &Value) -> Result<Parts, RequestError> {
    let mut o = Obj::new("parts", v)?;
    let d = Parts::default();
    let series = |o: &mut Obj, key: &str, default: Series| -> Result<Series, RequestError> {
        match o.string(key)? {
            None => Ok(default),
            Some(s) => Series::parse(&s).ok_or_else(|| {
                o.err(key, &format!("'{s}' is not an IEC 60063 series; use one of E3, E6, E12, E24, E48, E96, E192"))
            }),
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
        return Err(
            o.err("resistor_max", "the resistor window must span at least one decade above resistor_min (> 0 Ω)")
        );
    }
    o.finish(&[
        "resistor_series",
        "resistor_tolerance",
        "capacitor_series",
        "capacitor_tolerance",
        "resistor_min",
        "resistor_max",
    ])?;
    Ok(Parts { resistor_series, resistor_tolerance, capacitor_series, capacitor_tolerance, resistor_min, resistor_max })
}

pub(super) fn read_amplifier(v: &Value) -> Result<AmplifierSpec, RequestError> {
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
        supply_rejection: match o.get("supply_rejection") {
            // "80 dB" and "-80 dB" both mean 1e-4: a rejection is always below one.
            Some(Value::String(t)) if is_decibels(t) => {
                Some(10f64.powf(-decibels(&o.path_of("supply_rejection"), &Value::String(t.clone()))?.abs() / 20.0))
            }
            _ => o.q("supply_rejection", Quantity::Ratio)?,
        },
    };
    for (key, val) in [("gbw", a.gbw), ("slew_rate", a.slew_rate), ("supply_max", a.supply_max)] {
        if let Some(x) = val {
            if x <= 0.0 {
                return Err(o.err(key, "must be above 0"));
            }
        }
    }
    for (key, val) in [
        ("noise_voltage", a.noise_voltage),
        ("noise_current", a.noise_current),
        ("noise_corner", a.noise_corner),
        ("supply_min", a.supply_min),
    ] {
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
    if let Some(r) = a.supply_rejection {
        if !(r > 0.0 && r < 1.0) {
            return Err(o.err(
                "supply_rejection",
                "must lie between 0 and 1 V/V (offset change per volt of supply), or be given in decibels, e.g. \
                    \"80 dB\" or 1e-4",
            ));
        }
    }
    // Negative offsets and bias currents describe the same spread as positive ones.
    a.offset = a.offset.map(f64::abs);
    a.bias_current = a.bias_current.map(f64::abs);
    o.finish(&AMPLIFIER_FIGURES)?;
    Ok(a)
}

pub(super) fn read_analysis(v: &Value) -> Result<AnalysisOptions, RequestError> {
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
