//! The amplifier the design assumes, and the rails it runs from.
//!
//! A user rarely knows every figure of the amplifier before the design exists. Rangefit
//! therefore works with a *generic class* that fits the supplies — named in plain words —
//! and fills each figure the user did not give from that class. The design then states the
//! requirements it places on the amplifier (see [`crate::design`]), so the user can pick any
//! part that meets them. No product is named or implied.
//!
//! Class figures are typical values for the class (common practice, no single source): a
//! low-voltage CMOS amplifier with rail-to-rail input and output, and a wide-supply
//! bipolar-input amplifier with rail-to-rail output.
//!
//! The same [`Amplifier`] drives the solver, the Monte Carlo kernel and the SPICE3
//! subcircuit in [`crate::netlist`] through one macro-model ([`model`]), so the prediction
//! and the exported netlist describe one model: finite DC gain, one dominant pole at
//! `gbw / open_loop_gain`, output limited `swing_low`/`swing_high` inside the rails.

pub mod model;

use serde::Serialize;

use crate::request::{AmplifierSpec, Request};
pub use model::{MacroModel, GM};

/// The rails one amplifier runs from. `neg` is 0 V (ground) on a single supply.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Rails {
    pub pos: f64,
    pub neg: f64,
}

impl Rails {
    /// Chooses the amplifier rails from the supplies listed in the request.
    ///
    /// Of several positive rails the smallest that still reaches the converter's maximum is
    /// used, so the amplifier cannot drive the converter far above its range; the most
    /// negative rail is used when the request lists one.
    pub fn choose(req: &Request) -> Rails {
        let mut pos: Vec<f64> = req.supplies.iter().copied().filter(|&v| v > 0.0 && v.is_finite()).collect();
        crate::order::sort_by(&mut pos, |a, b| a.total_cmp(b));
        let reach = req.destination.max;
        let p = pos.iter().copied().find(|&v| v >= reach).or_else(|| pos.last().copied()).unwrap_or(0.0);
        let n = req.supplies.iter().copied().filter(|&v| v < 0.0 && v.is_finite()).fold(0.0, f64::min);
        Rails { pos: p, neg: n }
    }
    pub fn total(&self) -> f64 {
        self.pos - self.neg
    }
    pub fn is_dual(&self) -> bool {
        self.neg < 0.0
    }
}

/// Every figure of the amplifier the design uses, each either given or from the class.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Amplifier {
    /// Plain description of the assumed class, e.g. "rail-to-rail input and output CMOS amplifier, 1.8–5.5 V".
    pub class: String,
    pub gbw: f64,
    pub slew_rate: f64,
    pub swing_low: f64,
    pub swing_high: f64,
    pub cm_low: f64,
    pub cm_high: f64,
    pub supply_min: f64,
    pub supply_max: f64,
    pub offset: f64,
    pub bias_current: f64,
    pub noise_voltage: f64,
    pub noise_current: f64,
    /// Corner below which voltage and current noise densities rise as 1/f (Hz).
    pub noise_corner: f64,
    pub open_loop_gain: f64,
    /// Input offset change per volt of total supply change, V/V (the supply rejection ratio's
    /// inverse; typical figures, common practice: 80 dB CMOS, 90 dB bipolar).
    pub supply_rejection: f64,
    /// Names of the fields taken from the class rather than from the request.
    pub assumed: Vec<&'static str>,
}

impl Amplifier {
    /// Fills the user's figures with the generic class that fits `rails`.
    pub fn resolve(spec: &AmplifierSpec, rails: Rails) -> Amplifier {
        let class = if rails.total() <= 5.5 { low_voltage_class() } else { wide_supply_class() };
        let mut assumed = Vec::new();
        let mut pick = |name: &'static str, given: Option<f64>, default: f64| match given {
            Some(v) if v.is_finite() => v,
            _ => {
                assumed.push(name);
                default
            }
        };
        let a = Amplifier {
            class: String::new(),
            gbw: pick("gbw", spec.gbw, class.gbw),
            slew_rate: pick("slew_rate", spec.slew_rate, class.slew_rate),
            swing_low: pick("swing_low", spec.swing_low, class.swing_low),
            swing_high: pick("swing_high", spec.swing_high, class.swing_high),
            cm_low: pick("cm_low", spec.cm_low, class.cm_low),
            cm_high: pick("cm_high", spec.cm_high, class.cm_high),
            supply_min: pick("supply_min", spec.supply_min, class.supply_min),
            supply_max: pick("supply_max", spec.supply_max, class.supply_max),
            offset: pick("offset", spec.offset, class.offset),
            bias_current: pick("bias_current", spec.bias_current, class.bias_current),
            noise_voltage: pick("noise_voltage", spec.noise_voltage, class.noise_voltage),
            noise_current: pick("noise_current", spec.noise_current, class.noise_current),
            noise_corner: pick("noise_corner", spec.noise_corner, class.noise_corner),
            open_loop_gain: pick("open_loop_gain", spec.open_loop_gain, class.open_loop_gain),
            supply_rejection: pick("supply_rejection", spec.supply_rejection, class.supply_rejection),
            assumed: Vec::new(),
        };
        let given_all = assumed.is_empty();
        Amplifier {
            class: if given_all { "amplifier as specified in the request".to_string() } else { class.class },
            assumed,
            ..a
        }
    }

    /// Lowest and highest output the amplifier reaches on `rails`.
    pub fn output_limits(&self, rails: Rails) -> (f64, f64) {
        self.macro_model().output_limits(rails)
    }

    /// Lowest and highest input common-mode voltage on `rails`.
    pub fn input_limits(&self, rails: Rails) -> (f64, f64) {
        (rails.neg + self.cm_low, rails.pos - self.cm_high)
    }
}

/// 1.8–5.5 V CMOS, rail-to-rail input and output (typical figures, common practice).
fn low_voltage_class() -> Amplifier {
    Amplifier {
        class: "rail-to-rail input and output CMOS amplifier for 1.8–5.5 V supplies".to_string(),
        gbw: 10e6,
        slew_rate: 5e6,
        swing_low: 0.05,
        swing_high: 0.05,
        cm_low: -0.1,
        cm_high: -0.1,
        supply_min: 1.8,
        supply_max: 5.5,
        offset: 1e-3,
        bias_current: 10e-12,
        noise_voltage: 15e-9,
        noise_current: 1e-15,
        noise_corner: 500.0,
        open_loop_gain: 1e5,
        supply_rejection: 1e-4,
        assumed: Vec::new(),
    }
}

/// 4.5–36 V bipolar input with rail-to-rail output, input range including the lower rail
/// (typical figures, common practice).
fn wide_supply_class() -> Amplifier {
    Amplifier {
        class: "bipolar-input amplifier with rail-to-rail output for 4.5–36 V supplies".to_string(),
        gbw: 3e6,
        slew_rate: 2e6,
        swing_low: 0.15,
        swing_high: 0.15,
        cm_low: 0.0,
        cm_high: 1.5,
        supply_min: 4.5,
        supply_max: 36.0,
        offset: 0.5e-3,
        bias_current: 20e-9,
        noise_voltage: 10e-9,
        noise_current: 0.4e-12,
        noise_corner: 10.0,
        open_loop_gain: 1e5,
        supply_rejection: 10f64.powf(-4.5),
        assumed: Vec::new(),
    }
}
