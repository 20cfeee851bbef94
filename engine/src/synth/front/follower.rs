//! The input buffer of a high-impedance sensor (`source.kind = "high_impedance"`): an
//! ion-selective electrode, a piezo film or an electret capsule without its own amplifier,
//! with a source resistance from megohms to teraohms. Nothing may load it, so it feeds a
//! unity-gain follower (U1) directly; the gain stage is then synthesised for the follower's
//! output, a stiff voltage source (`equivalent`), and the follower is put in front of it
//! (`insert`). The analyses run on the whole circuit with the sensor's own model.
//!
//! **Sensor model.** DC coupling (electrodes): the EMF behind `RSENSE` (the source
//! resistance) with `CSENSE` (electrode and cable capacitance) from the input to ground; the
//! two roll the signal off at 1/(2π·R_s·C_s), which the `input_corner` check compares with
//! band_high. AC coupling (piezo film, electret capsule): the EMF behind `CSENSE` (the
//! capacitance the signal sits behind) with `RSENSE` across it (leakage).
//!
//! **Return level.** With split rails the sensor returns to ground. On one supply an
//! AC-coupled sensor, and a DC-coupled one whose range the follower cannot reach above
//! ground, returns to a reference at half the positive rail (`bref`, a divider with a
//! bypass capacitor): the sensor floats on it, so its own leakage cannot pull the input away
//! from the level the bias resistor sets (a bias resistor to mid-rail against a leakage to
//! ground would lose: 1 TΩ against 1 GΩ rests the input at a thousandth of the reference).
//!
//! **Bias path** (AC coupling): the follower's + input needs a DC path; a resistor R_b to
//! the return level gives it, and with C_s sets the low corner f_L = 1/(2π·(R_b ∥ R_s)·C_s).
//! R_b is the smallest series value that puts f_L at or below band_low / 10, the rule the
//! coupling capacitors follow; when the leakage alone sets a higher corner, R_b is ten times
//! the leakage (more buys nothing). It may lie far above the resistor window: above
//! [`STANDARD_RESISTOR_MAX`] it is a special high-value part (a warning, and flagged in the
//! part list), above [`SPECIAL_RESISTOR_MAX`] it cannot be bought (an error).
//!
//! **Range.** For both couplings the follower's input and output must hold the sensor's
//! range around its rest level on the rails at the low end of their tolerance, inside the
//! amplifier's input range and output swing less the synthesis margin (`follower_range`).
//!
//! **Bias current.** The follower's input bias current flows through the source (DC) or
//! through R_b (AC): an offset of I_b·R at the input, checked against the span and one
//! LSB referred to the sensor. The worst case and Monte Carlo include it as they include
//! every amplifier's bias current.

use serde::Serialize;

use crate::amplifier::{Amplifier, Rails};
use crate::circuit::{Circuit, Divider, PartKind, PartRole, Stage, StageKind, StageRole, GND};
use crate::diag::Check;
use crate::figures::Block;
use crate::request::{Coupling, Request, SourceKind};
use crate::units::{format, Quantity};
use crate::values::{self, SPECIAL_RESISTOR_MAX, STANDARD_RESISTOR_MAX};

/// Each leg of the reference divider for the bias resistor (single supply), Ω.
pub const REF_LEG: f64 = 100e3;
/// Bypass of that reference, F (common practice).
pub const REF_BYPASS: f64 = 100e-9;

/// The designed buffer (`high_impedance` in the design output).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BufferDesign {
    /// AC coupling: the bias resistor, Ω.
    pub bias_resistor: Option<f64>,
    /// The DC level R_b holds the input at (AC coupling), V: ground with split rails, half
    /// the positive rail from a divider otherwise.
    pub return_level: f64,
    /// Whether the follower passes the sensor's range around its rest level on the rails at
    /// the low end of their tolerance (input range and output swing).
    pub follows: bool,
    /// The follower's lowest and highest input over the sensor's range, V.
    pub input_range: (f64, f64),
    /// What the follower can take and drive there, V (the tighter of input range and swing,
    /// less the synthesis margin).
    pub reach: (f64, f64),
    /// The follower's input at the middle of the sensor's range, V.
    pub input_level: f64,
    /// AC coupling: the low corner the bias resistor and the sensor's capacitance set, Hz.
    pub low_corner: Option<f64>,
    /// DC coupling: where the source resistance and the capacitance at the input roll the
    /// signal off, Hz (absent without a capacitance).
    pub input_corner: Option<f64>,
    /// Input offset from the amplifier's bias current through the source or R_b, V.
    pub bias_error: f64,
}

/// The buffer for a high-impedance request; `None` for other kinds.
pub fn plan(req: &Request, amp: &Amplifier, rails: Rails) -> Option<BufferDesign> {
    let s = &req.source;
    if s.kind != SourceKind::HighImpedance {
        return None;
    }
    let cs = s.capacitance.unwrap_or(0.0);
    let r_s = s.impedance;
    let mid = 0.5 * (s.min + s.max);
    // The return's reference halves the level source: the converter's reference pin where
    // the request brings one out, else the positive rail.
    let (source, node) = crate::synth::level_source(req, rails, 0.5 * rails.pos);
    let mid_rail = if rails.is_dual() { 0.0 } else { 0.5 * source };
    // What the follower can take and drive on the rails at the low end of their tolerance;
    // a return at mid-rail comes down with the rail.
    let low = crate::synth::low_rails(req, rails);
    let (out_lo, out_hi) = amp.output_limits(low);
    let (in_lo, in_hi) = amp.input_limits(low);
    let m = crate::synth::SWING_MARGIN;
    let reach = (out_lo.max(in_lo) + m, out_hi.min(in_hi) - m);
    let scale = if node == "vpos" && rails.pos > 0.0 { low.pos / rails.pos } else { 1.0 };
    let range = |input_level: f64| (input_level + (s.min - mid), input_level + (s.max - mid));
    let inside = |(lo, hi): (f64, f64), ret: f64| lo + (scale - 1.0) * ret >= reach.0 && hi <= reach.1;
    match s.coupling {
        Coupling::Dc => {
            // The sensor against ground if the follower can pass its range there; otherwise,
            // on one supply, lifted to mid-rail.
            let grounded = range(mid);
            let return_level = if inside(grounded, 0.0) || rails.is_dual() { 0.0 } else { mid_rail };
            let input_range = range(return_level + mid);
            Some(BufferDesign {
                bias_resistor: None,
                return_level,
                follows: inside(input_range, return_level),
                input_range,
                reach,
                input_level: return_level + mid,
                low_corner: None,
                input_corner: (cs > 0.0).then(|| 1.0 / (2.0 * std::f64::consts::PI * r_s * cs)),
                bias_error: amp.bias_current * r_s,
            })
        }
        Coupling::Ac => {
            // R_b ∥ R_s must reach `want`: R_b ≥ want·R_s/(R_s − want); when the leakage alone
            // sets a higher corner, ten times the leakage (a larger R_b buys nothing).
            let want = 10.0 / (2.0 * std::f64::consts::PI * cs * s.band_low.max(1e-6));
            let need = if r_s > 1.1 * want { want * r_s / (r_s - want) } else { 10.0 * r_s };
            let need = need.min(SPECIAL_RESISTOR_MAX);
            let r_b = values::step_up(req.parts.resistor_series, need).unwrap_or(need);
            let r_par = r_b * r_s / (r_b + r_s);
            // The sensor floats on the return level: its leakage carries only the EMF's own
            // DC (the middle of its range) to the input, divided against R_b.
            let input_level = mid_rail + mid * r_b / (r_s + r_b);
            let input_range = range(input_level);
            Some(BufferDesign {
                bias_resistor: Some(r_b),
                return_level: mid_rail,
                follows: inside(input_range, mid_rail),
                input_range,
                reach,
                input_level,
                low_corner: Some(1.0 / (2.0 * std::f64::consts::PI * r_par * cs)),
                input_corner: None,
                bias_error: amp.bias_current * r_par,
            })
        }
    }
}

/// The request the gain stage is synthesised for: the follower's output, a stiff DC source
/// (the signal around the input's DC level for AC coupling).
pub fn equivalent(req: &Request, b: &BufferDesign) -> Request {
    let s = &req.source;
    let mid = 0.5 * (s.min + s.max);
    super::stiff_source(req, b.input_level + (s.min - mid), b.input_level + (s.max - mid))
}

/// Puts the follower (U1; the gain stage's amplifiers move up by one) and the bias path in
/// front of the gain stage synthesised for [`equivalent`], and replaces the bench's sensor
/// with the high-impedance model.
pub fn insert(circuit: &mut Circuit, req: &Request, b: &BufferDesign, rails: Rails) {
    let s = &req.source;
    super::make_room_in_front(circuit, "buf");
    let gbw = circuit.amplifier.gbw;
    let vneg = if rails.is_dual() { "vneg" } else { GND };
    let mut bld = crate::circuit::Builder::resume(std::mem::take(&mut circuit.parts));
    let mut parts = vec![bld.front_amplifier(
        "U1",
        gbw,
        ["sense", "buf", "vpos", vneg, "buf"],
        (StageRole::Buffer, PartRole::Amplifier),
        "follower: takes no current from the sensor and drives the rest",
    )];
    let rtol = Some(req.parts.resistor_tolerance);
    // The return reference (one supply, AC coupling or a lifted DC return), else ground.
    let ret = if b.return_level != 0.0 { "bref" } else { GND };
    if let Some(r_b) = b.bias_resistor {
        parts.push(bld.add(
            PartKind::Resistor,
            r_b,
            rtol,
            &["sense", ret],
            (StageRole::Buffer, PartRole::Bias),
            "bias resistor: the input's DC path; sets the low corner with the sensor's capacitance",
        ));
    }
    {
        if ret != GND {
            let (_, from) = crate::synth::level_source(req, rails, 0.5 * rails.pos);
            crate::synth::reference_pin(&mut bld, req, rails, from);
            let divider = Divider {
                from,
                tap: "bref",
                top: REF_LEG,
                bottom: REF_LEG,
                bypass: Some((REF_BYPASS, "sensor return reference bypass")),
                stage: StageRole::Buffer,
                what: "sensor return reference divider",
            };
            parts.extend(bld.divider(&divider, rtol, Some(req.parts.capacitor_tolerance)));
        }
    }
    let mid = 0.5 * (s.min + s.max);
    let cs = s.capacitance.unwrap_or(0.0);
    bld.bench(
        "VSENSE",
        PartKind::VoltageSource,
        mid,
        &["emf", ret],
        (StageRole::Sensor, PartRole::Emf),
        "sensor EMF (swept over the source range)",
    );
    bld.bench(
        "RSENSE",
        PartKind::Resistor,
        s.impedance,
        &["emf", "sense"],
        (StageRole::Sensor, PartRole::SourceResistance),
        if s.coupling == Coupling::Ac { "sensor leakage resistance" } else { "sensor source resistance" },
    );
    match s.coupling {
        Coupling::Ac => bld.bench(
            "CSENSE",
            PartKind::Capacitor,
            cs,
            &["emf", "sense"],
            (StageRole::Sensor, PartRole::SeriesCapacitance),
            "sensor capacitance (the signal sits behind it)",
        ),
        Coupling::Dc if cs > 0.0 => bld.bench(
            "CSENSE",
            PartKind::Capacitor,
            cs,
            &["sense", ret],
            (StageRole::Sensor, PartRole::ShuntCapacitance),
            "sensor and cable capacitance at the input",
        ),
        Coupling::Dc => {}
    }
    circuit.parts = bld.parts;
    let what = match b.bias_resistor {
        Some(r) => format!(
            "follower with a {} bias resistor to {}",
            format(r, Quantity::Resistance),
            format(b.return_level, Quantity::Voltage)
        ),
        None => "follower: the sensor sees only the amplifier's input".to_string(),
    };
    circuit.stages.insert(0, Stage { role: StageRole::Buffer, kind: StageKind::Follower, description: what, parts });
}

/// Design equations of the buffer, with the numbers substituted.
pub fn equations(req: &Request, b: &BufferDesign) -> Vec<String> {
    let s = &req.source;
    let cs = s.capacitance.unwrap_or(0.0);
    let hz = |x: f64| format(x, Quantity::Frequency);
    let mut e =
        vec!["U1 follows the sensor (unity gain, no resistor in the signal path); the gain stage works on its output"
            .to_string()];
    if b.return_level != 0.0 {
        e.push(format!(
            "the sensor{} returns to {} (a divider with a bypass); the input rests at {}",
            if b.bias_resistor.is_some() { " and R_b" } else { "" },
            format(b.return_level, Quantity::Voltage),
            format(b.input_level, Quantity::Voltage)
        ));
    }
    if let (Some(r_b), Some(f_l)) = (b.bias_resistor, b.low_corner) {
        e.push(format!(
            "R_b ≥ 10 / (2π·C_s·band_low) = 10 / (2π·{}·{}) → {}; f_L = 1/(2π·(R_b ∥ R_s)·C_s) = {}",
            format(cs, Quantity::Capacitance),
            hz(s.band_low),
            format(r_b, Quantity::Resistance),
            hz(f_l)
        ));
    }
    if let Some(f_c) = b.input_corner {
        e.push(format!(
            "input corner 1/(2π·R_s·C_s) = 1/(2π·{}·{}) = {}",
            format(s.impedance, Quantity::Resistance),
            format(cs, Quantity::Capacitance),
            hz(f_c)
        ));
    }
    e
}

/// Checks of the buffer: bias-current offset, the input corner, the low corner.
pub fn checks(req: &Request, b: &BufferDesign, amp: &Amplifier) -> Vec<Check> {
    let s = &req.source;
    let span = s.max - s.min;
    let lsb = crate::request::lsb_of(span, req.destination.bits);
    let v = |x: f64| format(x, Quantity::Voltage);
    let mut c = Vec::new();
    let (lo, hi) = b.input_range;
    let against = if b.return_level != 0.0 {
        format!(" on its return at {} (the sensor must float: its return connects only there)", v(b.return_level))
    } else {
        String::new()
    };
    let range = format!(
        "The sensor swings {} … {}{against}, so the follower's input and output go {} … {}; on the rails at the low \
            end of their tolerance it can take and drive {} … {}",
        v(s.min),
        v(s.max),
        v(lo),
        v(hi),
        v(b.reach.0),
        v(b.reach.1)
    );
    c.push(if b.follows {
        Check::ok("follower_range", format!("{range}."))
    } else {
        Check::error(
            "follower_range",
            format!(
                "{range}: the follower would clip. Use rails on which the amplifier reaches {} … {}, or split \
                    rails (the sensor then returns to ground).",
                v(lo),
                v(hi)
            ),
        )
    });
    if let Some(r_b) = b.bias_resistor {
        let std_max = format(STANDARD_RESISTOR_MAX, Quantity::Resistance);
        if r_b > SPECIAL_RESISTOR_MAX * (1.0 + 1e-9) {
            c.push(Check::error(
                "bias_part",
                format!(
                    "The bias resistor would be {}, beyond the {} special high-value parts reach.",
                    format(r_b, Quantity::Resistance),
                    format(SPECIAL_RESISTOR_MAX, Quantity::Resistance)
                ),
            ));
        } else if r_b > STANDARD_RESISTOR_MAX * (1.0 + 1e-9) {
            c.push(Check::warning(
                "bias_part",
                format!(
                    "The bias resistor {} is above the {std_max} that ordinary series parts reach: order a special \
                        high-value part (glass or ceramic body; flagged in the part list), keep its body and the input \
                        clean and guarded (surface leakage on a dirty board is of the same order).",
                    format(r_b, Quantity::Resistance)
                ),
            ));
        }
    }
    let through = if b.bias_resistor.is_some() { "the bias resistor" } else { "the sensor's source resistance" };
    let text = format!(
        "The amplifier's bias current {} through {through} offsets the input by {} ({:.2} % of the sensor's span, \
            {:.1} LSB referred to the sensor)",
        format(amp.bias_current, Quantity::Current),
        v(b.bias_error),
        100.0 * b.bias_error / span,
        b.bias_error / lsb
    );
    let needed =
        0.5 * lsb / if b.bias_resistor.is_some() { b.bias_error / amp.bias_current.max(1e-18) } else { s.impedance };
    c.push(if b.bias_error > 0.1 * span {
        Check::error(
            "bias_current",
            format!(
                "{text}; choose an amplifier with a bias current below {} \
            (electrometer-grade inputs have femtoamperes).",
                format(needed, Quantity::Current)
            ),
        )
    } else if b.bias_error > lsb {
        Check::warning(
            "bias_current",
            format!(
                "{text}; a calibration removes it at one temperature, but it doubles \
            about every 10 °C; an amplifier below {} keeps it under ½ LSB.",
                format(needed, Quantity::Current)
            ),
        )
    } else {
        Check::ok("bias_current", format!("{text}."))
    });
    if let Some(f_c) = b.input_corner {
        let msg = format!(
            "The source resistance and the capacitance at the input roll the signal off at {}",
            format(f_c, Quantity::Frequency)
        );
        c.push(if f_c < s.band_high {
            Check::warning(
                "input_corner",
                format!(
                    "{msg}, below the band's top {}: the sensor and its cable limit the \
                band, not the circuit. A shorter or lower-capacitance cable, or a driven guard (shield at the \
                follower's output), raises it.",
                    format(s.band_high, Quantity::Frequency)
                ),
            )
        } else {
            Check::ok(
                "input_corner",
                format!("{msg}, above the band's top {}.", format(s.band_high, Quantity::Frequency)),
            )
        });
    }
    if let (Some(r_b), Some(f_l)) = (b.bias_resistor, b.low_corner) {
        let text = format!(
            "The {} bias resistor, the sensor's {} leakage and its capacitance set the low corner at {}",
            format(r_b, Quantity::Resistance),
            format(s.impedance, Quantity::Resistance),
            format(f_l, Quantity::Frequency)
        );
        c.push(if f_l <= 0.1 * s.band_low * (1.0 + 1e-6) {
            Check::ok("low_corner", format!("{text}, a tenth of band_low or lower."))
        } else {
            Check::warning(
                "low_corner",
                format!(
                    "{text}, above a tenth of band_low ({}): the sensor's own leakage sets it, and no bias resistor \
                        can lower it; the response check says what this does to the band's low end.",
                    format(0.1 * s.band_low, Quantity::Frequency)
                ),
            )
        });
    }
    c
}

impl super::Steps for BufferDesign {
    fn equivalent(&self, ctx: &super::Context) -> Request {
        equivalent(ctx.req, self)
    }

    /// The gain stage's source is the follower, which the follower's checks cover.
    fn supersedes(&self) -> &'static [&'static str] {
        &["sensor_impedance"]
    }

    fn insert(&mut self, circuit: &mut Circuit, ctx: &super::Context) {
        insert(circuit, ctx.req, self, ctx.rails);
    }

    fn equations(&self, ctx: &super::Context) -> Vec<String> {
        equations(ctx.req, self)
    }

    fn checks(&mut self, _c: &Circuit, _p: &crate::predict::Predicted, ctx: &super::Context) -> Vec<Check> {
        checks(ctx.req, self, ctx.amp)
    }

    fn figures(&self, _ctx: &super::Context) -> Vec<Block> {
        let mut b = Block::new("buffer", "Input follower U1")
            .quantity("Sensor return at", self.return_level, Quantity::Voltage)
            .quantity("Offset from the bias current", self.bias_error, Quantity::Voltage);
        if let Some(r) = self.bias_resistor {
            b = b.quantity("Bias resistor", r, Quantity::Resistance);
        }
        if let Some(f) = self.low_corner {
            b = b.quantity("Low corner", f, Quantity::Frequency);
        }
        if let Some(f) = self.input_corner {
            b = b.quantity("Input corner (source R and C)", f, Quantity::Frequency);
        }
        vec![b]
    }
}
