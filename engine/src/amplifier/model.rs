//! The amplifier macro-model: the one model of an amplifier that the solver stamps
//! ([`crate::solve`]), the Monte Carlo kernel compiles ([`crate::analysis::perturb`]) and the
//! netlist exports as its SPICE3 subcircuit ([`crate::netlist`]), which is why the prediction
//! matches a simulation of the exported netlist.
//!
//! A transconductance [`GM`] from the input difference drives an internal node loaded by a
//! resistance `open_loop_gain / GM` and a capacitance `GM / (2π·gbw)`: DC gain
//! `open_loop_gain`, one dominant pole at `gbw / open_loop_gain`, unity gain at `gbw`. A
//! unity-gain buffer copies the internal node to the output. At DC the internal node is
//! limited to the output swing: `swing_low` above the lower rail, `swing_high` below the
//! upper one (the solver pins it there, the netlist clamps it with two diodes).

use num_complex::Complex;

use super::{Amplifier, Rails};

/// Transconductance of the macro-model's input stage, A/V.
pub const GM: f64 = 1e-3;

/// The element values of one amplifier's macro-model.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MacroModel {
    /// Input-stage transconductance, A/V ([`GM`]).
    pub gm: f64,
    /// DC gain from the input difference to the internal node (and the output), V/V.
    pub open_loop_gain: f64,
    /// Resistance loading the internal node, Ω: `open_loop_gain / gm`.
    pub load_resistance: f64,
    /// Capacitance loading the internal node, F: `gm / (2π·gbw)`.
    pub load_capacitance: f64,
    /// How far the output stays above the lower rail, V.
    pub swing_low: f64,
    /// How far the output stays below the upper rail, V.
    pub swing_high: f64,
}

impl MacroModel {
    /// The macro-model of `amp`.
    pub fn of(amp: &Amplifier) -> MacroModel {
        MacroModel {
            gm: GM,
            open_loop_gain: amp.open_loop_gain,
            load_resistance: amp.open_loop_gain / GM,
            load_capacitance: GM / (2.0 * std::f64::consts::PI * amp.gbw),
            swing_low: amp.swing_low,
            swing_high: amp.swing_high,
        }
    }

    /// The conductance loading the internal node, S (its admittance at DC).
    pub fn load_conductance(&self) -> f64 {
        1.0 / self.load_resistance
    }

    /// The admittance loading the internal node at angular frequency `omega`, S.
    pub fn load_admittance(&self, omega: f64) -> Complex<f64> {
        Complex::new(self.load_conductance(), omega * self.load_capacitance)
    }

    /// The internal node's DC voltage for an input difference `v_diff` (V), before the
    /// swing limit.
    pub fn unclamped(&self, v_diff: f64) -> f64 {
        v_diff * self.open_loop_gain
    }

    /// Lowest and highest output on `rails`.
    pub fn output_limits(&self, rails: Rails) -> (f64, f64) {
        (rails.neg + self.swing_low, rails.pos - self.swing_high)
    }
}

impl Amplifier {
    /// This amplifier's macro-model.
    pub fn macro_model(&self) -> MacroModel {
        MacroModel::of(self)
    }
}
