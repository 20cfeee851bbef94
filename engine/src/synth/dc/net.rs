//! A single-amplifier stage as resistor legs from its inputs to the sensor, the rails or
//! ground, and its output with an amplifier of finite open-loop gain.

use crate::amplifier::Rails;

/// Potential a resistor leg returns to.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Pot {
    Sensor,
    Pos,
    Neg,
    Gnd,
}

/// Position of one resistor in a template.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Slot {
    Plus(Pot),
    Minus(Pot),
    Feedback,
}

/// A single-amplifier stage with its resistor values.
#[derive(Debug, Clone, PartialEq)]
pub struct Net {
    pub slots: Vec<(Slot, f64)>,
    /// The + input sits on the sensor terminal with no resistor.
    pub direct: bool,
    /// The amplifier's open-loop DC gain: the output is the ideal one divided by
    /// 1 + noise gain / open-loop gain, as the solver and the netlist have it.
    pub open_loop_gain: f64,
}

impl Net {
    /// Voltage at the + input for sensor EMF `x` (ideal amplifier).
    pub fn plus_voltage(&self, x: f64, rs: f64, rails: Rails) -> f64 {
        if self.direct {
            return x;
        }
        let (mut num, mut den) = (0.0, 0.0);
        for (slot, r) in &self.slots {
            if let Slot::Plus(p) = slot {
                let (g, v) = leg(*p, *r, x, rs, rails);
                num += g * v;
                den += g;
            }
        }
        if den > 0.0 {
            num / den
        } else {
            0.0
        }
    }

    /// Output for sensor EMF `x` (amplifier with finite open-loop gain, no other error).
    pub fn output(&self, x: f64, rs: f64, rails: Rails) -> f64 {
        let vp = self.plus_voltage(x, rs, rails);
        let a0 = self.open_loop_gain.max(1.0);
        let Some(rf) = self.slots.iter().find(|(s, _)| *s == Slot::Feedback).map(|s| s.1) else {
            return vp / (1.0 + 1.0 / a0);
        };
        let gf = 1.0 / rf;
        let (mut sum_g, mut sum_gv) = (0.0, 0.0);
        for (slot, r) in &self.slots {
            if let Slot::Minus(p) = slot {
                let (g, v) = leg(*p, *r, x, rs, rails);
                sum_g += g;
                sum_gv += g * v;
            }
        }
        let noise_gain = 1.0 + sum_g / gf;
        (vp * noise_gain - sum_gv / gf) / (1.0 + noise_gain / a0)
    }

    /// DC resistance the sensor sees (1 TΩ for an amplifier input alone).
    pub fn input_resistance(&self) -> f64 {
        if self.direct {
            return 1e12;
        }
        let mut total = 0.0;
        for (slot, r) in &self.slots {
            match slot {
                Slot::Minus(Pot::Sensor) => return *r,
                Slot::Plus(Pot::Sensor) => total += r,
                _ => {}
            }
        }
        let others: f64 = self
            .slots
            .iter()
            .filter(|(s, _)| matches!(s, Slot::Plus(p) if *p != Pot::Sensor))
            .map(|(_, r)| 1.0 / r)
            .sum();
        if others > 0.0 {
            total + 1.0 / others
        } else {
            1e12
        }
    }
}

fn leg(p: Pot, r: f64, x: f64, rs: f64, rails: Rails) -> (f64, f64) {
    match p {
        Pot::Sensor => (1.0 / (r + rs).max(1e-9), x),
        Pot::Pos => (1.0 / r, rails.pos),
        Pot::Neg => (1.0 / r, rails.neg),
        Pot::Gnd => (1.0 / r, 0.0),
    }
}
