//! The winning DC stage turned into the circuit model: its resistors, the amplifier, the
//! stages and the equations it is explained with.

use super::{Candidate, Ctx, Pot, Slot};
use crate::amplifier::Amplifier;
use crate::circuit::{Builder, PartKind, PartRole, Stage, StageKind, StageRole};
use crate::synth::{Synthesis, Target};
use crate::units::{format, Quantity};

/// Turns the winning candidate into the circuit model.
pub(super) fn build(ctx: &Ctx, amp: &Amplifier, c: Candidate, t: Target) -> Synthesis {
    let req = ctx.req;
    let mut bld = Builder::default();
    crate::synth::bench(&mut bld, req, ctx.rails);
    crate::synth::reference_pin(&mut bld, req, ctx.rails, ctx.level_node);
    let tol = Some(req.parts.resistor_tolerance);
    let has_feedback = c.net.slots.iter().any(|(s, _)| *s == Slot::Feedback);
    let has_plus = c.net.slots.iter().any(|(s, _)| matches!(s, Slot::Plus(_)));
    let inp = if c.net.direct {
        "sense"
    } else if has_plus {
        "inp1"
    } else {
        "0"
    };
    let inn = if has_feedback { "inn1" } else { "adc" };
    let node = |p: Pot| match p {
        Pot::Sensor => "sense",
        Pot::Pos => ctx.level_node,
        Pot::Neg => "vneg",
        Pot::Gnd => "0",
    };
    let mut gain_parts = Vec::new();
    let mut ref_parts = Vec::new();
    for (slot, r) in &c.net.slots {
        let (a, b, stage, role, purpose) = match slot {
            Slot::Plus(Pot::Sensor) => {
                (inp, "sense", StageRole::Gain, PartRole::PlusInput, "input resistor from the sensor")
            }
            Slot::Plus(Pot::Gnd) => {
                (inp, "0", StageRole::Gain, PartRole::GroundLeg, "lower leg of the + input divider")
            }
            Slot::Plus(p) => (
                inp,
                node(*p),
                StageRole::Reference,
                PartRole::OffsetLeg,
                "offset leg of the + input network, from the rail",
            ),
            Slot::Minus(Pot::Sensor) => (
                inn,
                "sense",
                StageRole::Gain,
                PartRole::MinusInput,
                "input resistor (sets the gain with the feedback resistor)",
            ),
            Slot::Minus(Pot::Gnd) => {
                (inn, "0", StageRole::Gain, PartRole::GroundLeg, "gain-setting resistor to ground")
            }
            Slot::Minus(p) => (inn, node(*p), StageRole::Reference, PartRole::OffsetLeg, "offset leg into the − input"),
            Slot::Feedback => ("adc", inn, StageRole::Gain, PartRole::FeedbackResistor, "feedback resistor"),
        };
        let r_ref = bld.add(PartKind::Resistor, *r, tol, &[a, b], (stage, role), purpose);
        if stage == StageRole::Reference {
            ref_parts.push(r_ref)
        } else {
            gain_parts.push(r_ref)
        }
    }
    let vneg = if ctx.rails.is_dual() { "vneg" } else { "0" };
    let u = bld.add(
        PartKind::OpAmp,
        amp.gbw,
        None,
        &[inp, inn, "vpos", vneg, "adc"],
        (StageRole::Gain, PartRole::Amplifier),
        "amplifier: gain, level shift and converter drive",
    );
    gain_parts.push(u);
    let rs = ctx.rs;
    let s = &req.source;
    let y1 = c.net.output(s.min, rs, ctx.level);
    let y2 = c.net.output(s.max, rs, ctx.level);
    let m = (y2 - y1) / (s.max - s.min);
    let b = y1 - m * s.min;
    let v = |x: f64| format(x, Quantity::Voltage);
    let mut equations = vec![
        format!(
            "Wanted: y = m·x + b with m = {:.5} V/V, b = {} (source {} → {}, {} → {})",
            t.gain,
            v(t.offset),
            v(s.min),
            v(t.at_min),
            v(s.max),
            v(t.at_max)
        ),
        "V+ = Σ(Vᵢ/Rᵢ) / Σ(1/Rᵢ) over the + input legs; y = V+·(1 + Σ R_f/Rⱼ) − Σ Vⱼ·R_f/Rⱼ over the − input legs \
            (ideal amplifier; the sensor leg includes the sensor's own impedance)"
            .to_string(),
        format!("Rounded: m = {m:.5} V/V, b = {}; worst error at the extremes {}", v(b), v(c.error)),
    ];
    if rs > 0.0 {
        equations.push(format!("Sensor impedance {} included in the sensor leg", format(rs, Quantity::Resistance)));
    }
    let inverting = c.net.slots.iter().any(|(s, _)| *s == Slot::Minus(Pot::Sensor));
    let gain = StageKind::Gain { inverting };
    let mut stages = vec![Stage { role: StageRole::Gain, kind: gain, description: c.name.clone(), parts: gain_parts }];
    if !ref_parts.is_empty() {
        stages.insert(
            0,
            Stage {
                role: StageRole::Reference,
                kind: StageKind::Reference,
                description: "offset legs \
            from the rails, folded into the amplifier's input network (their impedance is part of the gain equations, \
            so no buffer is needed)"
                    .to_string(),
                parts: ref_parts,
            },
        );
    }
    Synthesis {
        circuit: crate::synth::finish(bld, stages, amp, ctx.rails),
        target: t,
        topology: c.name,
        equations,
        rounding_error: c.error,
        plus_range: {
            let (a, b) = (c.net.plus_voltage(s.min, rs, ctx.level), c.net.plus_voltage(s.max, rs, ctx.level));
            (a.min(b), a.max(b))
        },
        checks: Vec::new(),
        filter: None,
        no_filter: None,
        drive: None,
    }
}
