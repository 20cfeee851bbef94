//! Gain in two stages, for a single-ended voltage sensor (DC coupling) whose gain one stage
//! cannot give: synthesis finds no realisation in the resistor window and series, or the
//! gain's bandwidth need (noise gain × band_high × [`GBW_MARGIN`]) exceeds the amplifier's
//! GBW. Other sensor kinds and AC coupling are not split.
//!
//! **First stage** (U1, `StageKind::FirstGain`): the DC synthesiser's non-inverting templates
//! ([`dc`]) map the sensor's range onto a window inside U1's swing on the rails at the low
//! end of their tolerance: G1 times the sensor's range as it is when that fits the swing less
//! G1 × the amplifier's offset at each end (no level shift), else centred in the swing (the
//! templates then take the shift from the rail). Its parts go in front of the second stage
//! (output node `pre`, designators after the second stage's, amplifiers renumbered).
//!
//! **Second stage**: the usual synthesised gain stage, filter and drive, for the stiff source
//! the first stage's output presents.
//!
//! **The split.** The second stage's offset and noise reach the input divided by G1, so G1
//! is as large as the first stage allows: at most the whole gain (G2 ≥ 1), the swing (the
//! sensor's span plus twice the amplifier's offset, times G1, inside the swing) and the
//! bandwidth rule (GBW_MARGIN · G1 · band_high ≤ GBW); from there G1 steps down by
//! [`STEP`] until both stages are realisable and meet the bandwidth rule.

use serde::Serialize;

use super::{Context, Steps};
use crate::circuit::{Builder, Circuit, PartKind, PartRole, Place, Stage, StageKind, StageRole};
use crate::design::{noise_gain, GBW_MARGIN};
use crate::diag::Check;
use crate::figures::Block;
use crate::predict::{predict, Predicted};
use crate::request::{Coupling, Request, SourceKind};
use crate::synth::{self, dc, Limits, Synthesis, Target};
use crate::units::{format, Quantity};

/// Each further try lowers G1 by this factor, at most [`TRIES`] times (G1 down to about
/// 1/200 of the first try: below that the second stage would need all but the whole gain).
pub const STEP: f64 = 0.8;
pub const TRIES: usize = 24;

/// The first stage and the split (`two_stage` in the design output).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PreampDesign {
    /// Why one stage could not.
    pub reason: String,
    /// The first stage's gain and the second's, as rounded (V/V).
    pub g1: f64,
    pub g2: f64,
    /// The first stage's output at the sensor's minimum and maximum, V.
    pub window: (f64, f64),
    /// What the first stage's output may span on the rails at the low end of their
    /// tolerance, less the synthesis margin, V.
    pub reach: (f64, f64),
    /// The first stage's noise gain and the gain-bandwidth its bandwidth rule needs, Hz.
    pub noise_gain: f64,
    pub gbw_need: f64,
    /// The amplifier's offset voltage of each stage referred to the sensor, V.
    pub offset: [f64; 2],
    /// The amplifier's voltage noise density of each stage referred to the sensor, V/√Hz.
    pub noise: [f64; 2],
    /// The first stage's topology, and the range its + input sees, V.
    pub topology: String,
    pub plus_range: (f64, f64),
    #[serde(skip)]
    first: Circuit,
}

/// The two stages for `ctx.req`, whose one stage failed for `reason`: the first stage and the
/// second stage that `second` synthesises for the first stage's output (a stiff source), or
/// why no split works.
pub fn plan(
    ctx: &Context, gain: f64, reason: &str, second: impl Fn(&Request) -> Option<(Synthesis, Predicted)>,
) -> Result<(PreampDesign, Synthesis, Predicted), String> {
    let (req, amp) = (ctx.req, ctx.amp);
    let s = &req.source;
    if s.kind != SourceKind::SingleEnded || s.coupling == Coupling::Ac {
        return Err("two stages are built for a DC-coupled single-ended sensor only".to_string());
    }
    let (lo, hi) = amp.output_limits(synth::low_rails(req, ctx.rails));
    let m = synth::SWING_MARGIN;
    let reach = (lo + m, hi - m);
    let span = s.max - s.min;
    let by_swing = (reach.1 - reach.0) / (span + 2.0 * amp.offset);
    let by_gbw = amp.gbw / (GBW_MARGIN * s.band_high.max(1e-9));
    let top = gain.abs().min(by_swing).min(by_gbw);
    let mut g1 = top;
    for _ in 0..TRIES {
        if g1 < 1.5 {
            break;
        }
        if let Some(found) = split(ctx, g1, reach, reason, &second) {
            return Ok(found);
        }
        g1 *= STEP;
    }
    Err(format!(
        "two stages fail too: the first stage's swing allows G1 ≤ {}, its bandwidth G1 ≤ {}, and no G1 from {} \
         down to {} leaves both stages realisable; two stages need R_max/R_min ≥ 1.5·√gain = {}",
        sig(by_swing),
        sig(by_gbw),
        sig(top),
        sig((g1 / STEP).min(top)),
        sig(1.5 * gain.abs().sqrt())
    ))
}

/// Both stages with the first stage's gain `g1`, if they can be built.
fn split(
    ctx: &Context, g1: f64, reach: (f64, f64), reason: &str,
    second: &impl Fn(&Request) -> Option<(Synthesis, Predicted)>,
) -> Option<(PreampDesign, Synthesis, Predicted)> {
    let (req, amp, rails) = (ctx.req, ctx.amp, ctx.rails);
    let s = &req.source;
    let room = g1 * amp.offset;
    let (a, b) = (g1 * s.min, g1 * s.max);
    let shift = if a >= reach.0 + room && b <= reach.1 - room { 0.0 } else { 0.5 * (reach.0 + reach.1 - a - b) };
    let t = Target { at_min: a + shift, at_max: b + shift, gain: g1, offset: shift };
    let mut first_req = req.clone();
    (first_req.destination.min, first_req.destination.max) = (t.at_min, t.at_max);
    let plus = [dc::Template::NonInvertingPlus, dc::Template::NonInvertingMinus];
    let first = dc::synthesize_with(&first_req, amp, rails, t, Limits::of(amp, rails), &plus)?;
    let p1 = predict(req, &first.circuit)?;
    let ng1 = noise_gain(&first.circuit);
    let gbw_need = GBW_MARGIN * ng1 * s.band_high;
    let window = (p1.output_at_min, p1.output_at_max);
    if gbw_need > amp.gbw || window.0.min(window.1) < reach.0 || window.0.max(window.1) > reach.1 {
        return None;
    }
    let (s2, p2) = second(&super::stiff_source(req, window.0, window.1))?;
    let ng2 = noise_gain(&s2.circuit);
    if GBW_MARGIN * ng2 * s.band_high > amp.gbw {
        return None;
    }
    let (g1, g2) = (p1.gain, p2.gain);
    let en = amp.noise_voltage;
    let d = PreampDesign {
        reason: reason.to_string(),
        g1,
        g2,
        window,
        reach,
        noise_gain: ng1,
        gbw_need,
        offset: [amp.offset * ng1 / g1, amp.offset * ng2 / (g1 * g2).abs()],
        noise: [en * ng1 / g1, en * ng2 / (g1 * g2).abs()],
        topology: first.topology.clone(),
        plus_range: first.plus_range,
        first: first.circuit,
    };
    Some((d, s2, p2))
}

/// The first stage's nodes as they are named in front of the second stage.
fn rename(n: &str) -> &str {
    match n {
        "adc" => "pre",
        "inp1" => "pinp",
        "inn1" => "pinn",
        other => other,
    }
}

impl Steps for PreampDesign {
    fn equivalent(&self, ctx: &Context) -> Request {
        super::stiff_source(ctx.req, self.window.0, self.window.1)
    }

    /// The sensor meets the first stage, which the loading analysis covers.
    fn supersedes(&self) -> &'static [&'static str] {
        &["sensor_impedance"]
    }

    fn insert(&mut self, circuit: &mut Circuit, _ctx: &Context) {
        super::make_room_in_front(circuit, "pre");
        let mut bld = Builder::resume(std::mem::take(&mut circuit.parts));
        let mut names: Vec<(String, String)> = Vec::new();
        for p in self.first.parts.iter().filter(|p| !p.bench) {
            let nodes: Vec<&str> = p.nodes.iter().map(|n| rename(n)).collect();
            let stage = if p.stage == StageRole::Gain { StageRole::InputStage } else { p.stage };
            let at = Place { stage, role: p.role };
            let new = match <[&str; 5]>::try_from(nodes.as_slice()) {
                Ok(n) if p.kind == PartKind::OpAmp => {
                    bld.front_amplifier("U1", p.value, n, at, "first gain stage: most of the gain")
                }
                _ => bld.add(p.kind, p.value, p.tolerance, &nodes, at, &p.purpose),
            };
            names.push((p.reference.clone(), new));
        }
        for p in self.first.parts.iter().filter(|p| p.bench && p.role != Some(PartRole::ConverterLoad)) {
            if !bld.parts.iter().any(|q| q.reference == p.reference) {
                bld.parts.push(p.clone());
            }
        }
        circuit.parts = bld.parts;
        for st in self.first.stages.iter().rev() {
            let parts =
                st.parts.iter().filter_map(|d| names.iter().find(|(o, _)| o == d).map(|x| x.1.clone())).collect();
            let (role, kind) = match st.kind {
                StageKind::Gain { .. } => (StageRole::InputStage, StageKind::FirstGain),
                k => (st.role, k),
            };
            circuit.stages.insert(0, Stage { role, kind, description: st.description.clone(), parts });
        }
    }

    fn topology(&self, gain_stage: &str) -> String {
        format!("two stages: {} (G1 = {}), then {gain_stage}", self.topology, sig(self.g1))
    }

    fn equations(&self, _ctx: &Context) -> Vec<String> {
        vec![
            format!(
                "G1 = {} (first stage, noise gain {}), G2 = {}; G1·G2 = {}",
                sig(self.g1),
                sig(self.noise_gain),
                sig(self.g2),
                sig(self.g1 * self.g2)
            ),
            format!(
                "second stage referred to the input: offset and noise ÷ G1 (offset {} beside {})",
                v(self.offset[1]),
                v(self.offset[0])
            ),
        ]
    }

    fn checks(&mut self, _c: &Circuit, _p: &Predicted, _ctx: &Context) -> Vec<Check> {
        let (lo, hi) = (self.window.0.min(self.window.1), self.window.0.max(self.window.1));
        let text = format!(
            "{}; built in two stages: U1 gives G1 = {} into {} … {} (it may span {} … {}) and needs {} of \
             gain-bandwidth (noise gain {} × band × {GBW_MARGIN}), the rest G2 = {}. Referred to the input the second \
             stage adds {} offset and {} noise, beside the first's {} and {}.",
            self.reason,
            sig(self.g1),
            v(lo),
            v(hi),
            v(self.reach.0),
            v(self.reach.1),
            format(self.gbw_need, Quantity::Frequency),
            sig(self.noise_gain),
            sig(self.g2),
            v(self.offset[1]),
            nd(self.noise[1]),
            v(self.offset[0]),
            nd(self.noise[0])
        );
        vec![Check::ok("two_stage", text)]
    }

    fn needs(&self) -> Option<super::Needs> {
        Some(super::Needs {
            output_range: (self.window.0.min(self.window.1), self.window.0.max(self.window.1)),
            input_range: self.plus_range,
            gbw: self.gbw_need,
            gain: self.noise_gain,
            rule: "first gain stage U1 (10 × its noise gain",
        })
    }

    fn section(&self) -> &'static str {
        "Gain in two stages"
    }

    fn figures(&self, _ctx: &Context) -> Vec<Block> {
        let b = Block::new("two_stage", "First gain stage U1")
            .ratio("G1 (first stage)", self.g1, 4, "")
            .ratio("G2 (second stage)", self.g2, 4, "")
            .range("First stage output", self.window.0, self.window.1, Quantity::Voltage)
            .quantity("U1 gain-bandwidth need", self.gbw_need, Quantity::Frequency)
            .quantity("Offset at the input, first stage", self.offset[0], Quantity::Voltage)
            .quantity("Offset at the input, second stage", self.offset[1], Quantity::Voltage)
            .quantity("Noise at the input, first stage", self.noise[0], Quantity::VoltageNoise)
            .quantity("Noise at the input, second stage", self.noise[1], Quantity::VoltageNoise);
        vec![b]
    }
}

fn v(x: f64) -> String {
    format(x, Quantity::Voltage)
}

fn nd(x: f64) -> String {
    format(x, Quantity::VoltageNoise)
}

fn sig(x: f64) -> String {
    format(x, Quantity::Ratio)
}
