//! The transimpedance stage of a photodiode (`source.kind = "photodiode"`): the diode's
//! cathode at the − input of U1, its anode at ground, R_f ∥ C_f from U1's output back to
//! the − input, the + input at a small bias V_b. The output is V_b + (I_ph + I_dark)·R_f; the
//! gain stage is then synthesised for that stiff voltage (`equivalent`) and U1 is put in
//! front of it (`insert`), as the follower of a high-impedance sensor is.
//!
//! **Bias.** Split rails: V_b = 0. One supply: the output must stay off the lower rail in the
//! dark, so V_b = the lower output limit + 5 % of the output swing (at least 0.1 V), from a
//! divider with a bypass; the diode then sits at a small reverse bias V_b (common practice).
//!
//! **R_f.** The largest series value that keeps the brightest output, V_b + (I_max + I_dark)
//! · R_f, within 90 % of the room up to the upper output limit (common practice: the room
//! left absorbs part tolerances and a brighter-than-stated source).
//!
//! **C_f.** With the amplifier as a single pole (unity-gain frequency f_t = GBW, ω_t = 2π·f_t)
//! and C_in the diode's capacitance, the response is
//! Z(s) = −R_f/(1 + s(R_f·C_f + 1/ω_t) + s²·R_f·(C_f + C_in)/ω_t) (references: single-pole
//! transimpedance model). The maximally flat choice (Q = 0.7071) is
//! C_f = √(2·R_f·C_in/ω_t − 1/ω_t²)/R_f; when the band needs far less, C_f is raised so that
//! R_f·C_f puts the corner at 10 × band_high, which trims the noise bandwidth and keeps the
//! band flat. C_f is the nearest capacitor-series value.

use std::f64::consts::PI;

use serde::Serialize;

use crate::amplifier::{Amplifier, Rails};
use crate::circuit::{Circuit, Divider, PartKind, PartRole, Stage, StageKind, StageRole, GND};
use crate::diag::Check;
use crate::figures::Block;
use crate::request::{Request, SourceKind};
use crate::units::{format, Quantity};
use crate::values;

/// Each leg of the bias divider (one supply), Ω, and its bypass, F (common practice).
pub const BIAS_LEG: f64 = 100e3;
pub const BIAS_BYPASS: f64 = 100e-9;

/// The designed stage (`photodiode` in the design output).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TiaDesign {
    pub feedback_resistor: f64,
    pub feedback_capacitor: f64,
    /// The maximally flat C_f before rounding and before the noise-bandwidth rule, F.
    pub flat_capacitor: f64,
    /// The + input's bias, V (the diode's reverse bias).
    pub bias: f64,
    /// −3 dB of the single-pole model with the rounded parts, Hz.
    pub bandwidth: f64,
    /// Gain-bandwidth that keeps the stage flat to 1.5 × band_high with this R_f, Hz.
    pub gbw_needed: f64,
    /// Output offset from the dark current, V.
    pub dark_offset: f64,
}

/// The stage for a photodiode request; `None` for other kinds.
pub fn plan(req: &Request, amp: &Amplifier, rails: Rails) -> Option<TiaDesign> {
    let s = &req.source;
    if s.kind != SourceKind::Photodiode {
        return None;
    }
    let (out_lo, out_hi) = amp.output_limits(rails);
    let bias = if rails.is_dual() { 0.0 } else { out_lo + (0.05 * (out_hi - out_lo)).max(0.1) };
    let dark = s.dark_current.unwrap_or(0.0);
    let room = 0.9 * (out_hi - crate::synth::SWING_MARGIN - bias);
    let r_ideal = room / (s.max + dark).max(1e-15);
    let r_f = values::step_down(req.parts.resistor_series, r_ideal).unwrap_or(r_ideal);
    let c_in = s.capacitance.unwrap_or(0.0);
    let flat = flat_capacitor(r_f, c_in, amp.gbw);
    let quiet = 1.0 / (2.0 * PI * r_f * 10.0 * s.band_high.max(1e-9));
    let want = flat.max(quiet);
    let c_f = values::nearest(req.parts.capacitor_series, want).unwrap_or(want);
    let f_need = 1.5 * s.band_high;
    Some(TiaDesign {
        feedback_resistor: r_f,
        feedback_capacitor: c_f,
        flat_capacitor: flat,
        bias,
        bandwidth: bandwidth(r_f, c_f, c_in, amp.gbw),
        gbw_needed: 2.0 * PI * r_f * (c_in + c_f) * f_need * f_need,
        dark_offset: dark * r_f,
    })
}

/// The maximally flat feedback capacitor (Q = 0.7071) of the single-pole model, F:
/// √(2·R_f·C_in/ω_t − 1/ω_t²)/R_f; 0 when the amplifier is fast enough to need none.
pub fn flat_capacitor(r_f: f64, c_in: f64, gbw: f64) -> f64 {
    let wt = 2.0 * PI * gbw;
    let arg = 2.0 * r_f * c_in / wt - 1.0 / (wt * wt);
    if arg > 0.0 {
        arg.sqrt() / r_f
    } else {
        0.0
    }
}

/// −3 dB frequency of the single-pole transimpedance model, Hz (bisection on |Z|/R_f).
pub fn bandwidth(r_f: f64, c_f: f64, c_in: f64, gbw: f64) -> f64 {
    let wt = 2.0 * PI * gbw;
    let mag = |f: f64| {
        let w = 2.0 * PI * f;
        let re = 1.0 - w * w * r_f * (c_f + c_in) / wt;
        let im = w * (r_f * c_f + 1.0 / wt);
        1.0 / re.hypot(im)
    };
    let target = std::f64::consts::FRAC_1_SQRT_2;
    // |Z| may peak above 1 before it falls: search upward in decades, then bisect.
    let (mut lo, mut hi) = (1e-3, 1e-3);
    while mag(hi) >= target && hi < 1e12 {
        lo = hi;
        hi *= 10.0;
    }
    for _ in 0..200 {
        let mid = (lo * hi).sqrt();
        if mag(mid) >= target {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    (lo * hi).sqrt()
}

/// The request the gain stage is synthesised for: U1's output, a stiff DC source.
pub fn equivalent(req: &Request, t: &TiaDesign) -> Request {
    let s = &req.source;
    let dark = s.dark_current.unwrap_or(0.0);
    super::stiff_source(
        req,
        t.bias + (s.min + dark) * t.feedback_resistor,
        t.bias + (s.max + dark) * t.feedback_resistor,
    )
}

/// Puts U1 (the gain stage's amplifiers move up by one) with R_f, C_f and the bias in front
/// of the gain stage synthesised for [`equivalent`], and replaces the bench's sensor with the
/// photodiode: its photocurrent `ISENSE` and dark current `IDARK` out of `sense`, its
/// junction capacitance `CSENSE` from `sense` to ground.
pub fn insert(circuit: &mut Circuit, req: &Request, t: &TiaDesign, rails: Rails) {
    let s = &req.source;
    super::make_room_in_front(circuit, "tia");
    let gbw = circuit.amplifier.gbw;
    let vneg = if rails.is_dual() { "vneg" } else { GND };
    let plus = if t.bias != 0.0 { "pdb" } else { GND };
    let mut bld = crate::circuit::Builder::resume(std::mem::take(&mut circuit.parts));
    let mut parts = vec![bld.front_amplifier(
        "U1",
        gbw,
        [plus, "sense", "vpos", vneg, "tia"],
        (StageRole::Transimpedance, PartRole::Amplifier),
        "transimpedance amplifier: holds the diode at the bias and turns its current into a voltage",
    )];
    let rtol = Some(req.parts.resistor_tolerance);
    parts.push(bld.add(
        PartKind::Resistor,
        t.feedback_resistor,
        rtol,
        &["tia", "sense"],
        (StageRole::Transimpedance, PartRole::FeedbackResistor),
        "feedback resistor R_f: volts per ampere of photocurrent",
    ));
    parts.push(bld.add(
        PartKind::Capacitor,
        t.feedback_capacitor,
        Some(req.parts.capacitor_tolerance),
        &["tia", "sense"],
        (StageRole::Transimpedance, PartRole::FeedbackCapacitor),
        "feedback capacitor C_f: keeps the stage stable and flat against the diode's capacitance",
    ));
    if t.bias != 0.0 {
        let (source, from) = crate::synth::level_source(req, rails, t.bias);
        crate::synth::reference_pin(&mut bld, req, rails, from);
        let ratio = t.bias / source;
        let top = BIAS_LEG;
        let bottom = values::nearest(req.parts.resistor_series, top * ratio / (1.0 - ratio)).unwrap_or(top);
        let divider = Divider {
            from,
            tap: "pdb",
            top,
            bottom,
            bypass: Some((BIAS_BYPASS, "bias bypass")),
            stage: StageRole::Transimpedance,
            what: "bias divider",
        };
        parts.extend(bld.divider(&divider, rtol, Some(req.parts.capacitor_tolerance)));
    }
    let mid = 0.5 * (s.min + s.max);
    bld.bench(
        "ISENSE",
        PartKind::CurrentSource,
        mid,
        &["sense", GND],
        (StageRole::Sensor, PartRole::Photocurrent),
        "photocurrent (swept over the source range)",
    );
    if let Some(d) = s.dark_current.filter(|d| *d > 0.0) {
        let at = (StageRole::Sensor, PartRole::DarkCurrent);
        bld.bench("IDARK", PartKind::CurrentSource, d, &["sense", GND], at, "dark current");
    }
    bld.bench(
        "CSENSE",
        PartKind::Capacitor,
        s.capacitance.unwrap_or(0.0),
        &["sense", GND],
        (StageRole::Sensor, PartRole::ShuntCapacitance),
        "junction capacitance",
    );
    circuit.parts = bld.parts;
    let what = format!(
        "transimpedance stage, R_f {} ∥ C_f {}, diode biased at {}",
        format(t.feedback_resistor, Quantity::Resistance),
        format(t.feedback_capacitor, Quantity::Capacitance),
        format(t.bias, Quantity::Voltage)
    );
    let kind = StageKind::Transimpedance;
    circuit.stages.insert(0, Stage { role: StageRole::Transimpedance, kind, description: what, parts });
}

/// Design equations of the stage, with the numbers substituted.
pub fn equations(req: &Request, t: &TiaDesign) -> Vec<String> {
    let s = &req.source;
    let c_in = s.capacitance.unwrap_or(0.0);
    vec![
        format!(
            "U1 output = V_b + (I_ph + I_dark)·R_f with V_b = {}, R_f = {}",
            format(t.bias, Quantity::Voltage),
            format(t.feedback_resistor, Quantity::Resistance)
        ),
        format!(
            "C_f flat = √(2·R_f·C_in/ω_t − 1/ω_t²)/R_f = {} (C_in {}); noise-bandwidth rule 1/(2π·R_f·10·band_high); → \
                {}; −3 dB {}",
            format(t.flat_capacitor, Quantity::Capacitance),
            format(c_in, Quantity::Capacitance),
            format(t.feedback_capacitor, Quantity::Capacitance),
            format(t.bandwidth, Quantity::Frequency)
        ),
    ]
}

/// Checks of the stage: bandwidth against the band, dark-current offset, a tiny C_f.
pub fn checks(req: &Request, t: &TiaDesign, amp: &Amplifier) -> Vec<Check> {
    let s = &req.source;
    let hz = |x: f64| format(x, Quantity::Frequency);
    let mut c = Vec::new();
    let msg = format!("The transimpedance stage reaches {} (−3 dB, single-pole amplifier model)", hz(t.bandwidth));
    c.push(if t.bandwidth < 1.5 * s.band_high {
        Check::warning(
            "tia_bandwidth",
            format!(
                "{msg}, too close to the band's top {}: an amplifier with a \
            gain-bandwidth of {} or more, or a smaller R_f with more gain after it, keeps the band flat.",
                hz(s.band_high),
                hz(t.gbw_needed.max(amp.gbw))
            ),
        )
    } else {
        Check::ok("tia_bandwidth", format!("{msg}, above the band's top {}.", hz(s.band_high)))
    });
    if t.dark_offset > 0.0 {
        let span = (s.max - s.min) * t.feedback_resistor;
        c.push(Check::ok(
            "dark_current",
            format!(
                "The dark current adds {} at U1's output ({:.2} % of the signal's swing there); it is in the mapping \
                    at its stated value, but it roughly doubles every 10 °C: a dark reading in firmware removes it.",
                format(t.dark_offset, Quantity::Voltage),
                100.0 * t.dark_offset / span.max(1e-30)
            ),
        ));
    }
    if t.feedback_capacitor < 1e-12 {
        c.push(Check::warning(
            "feedback_capacitor",
            format!(
                "C_f is {}, about the stray capacitance across a resistor on a board: keep R_f's pads apart and \
                guard them, or use a T-network for R_f.",
                format(t.feedback_capacitor, Quantity::Capacitance)
            ),
        ));
    }
    c
}

impl super::Steps for TiaDesign {
    fn equivalent(&self, ctx: &super::Context) -> Request {
        equivalent(ctx.req, self)
    }

    /// The gain stage's source is the stage's output, which its own checks cover.
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
        vec![Block::new("transimpedance", "Transimpedance stage U1")
            .quantity("Feedback R_f", self.feedback_resistor, Quantity::Resistance)
            .quantity("Feedback C_f", self.feedback_capacitor, Quantity::Capacitance)
            .quantity("Diode bias", self.bias, Quantity::Voltage)
            .quantity("Stage bandwidth (−3 dB)", self.bandwidth, Quantity::Frequency)
            .quantity("Dark-current offset", self.dark_offset, Quantity::Voltage)]
    }
}
