//! Supply decoupling, the last step of synthesis: once every amplifier is placed (front end,
//! gain stage, filter sections, drive), each amplifier's supply pin on each rail gets its
//! local ceramic capacitor to ground and each rail one bulk capacitor. The rule is written
//! once, in [`decouple`].
//!
//! The capacitors sit between a rail and ground. The rails are ideal sources in the solver,
//! the Monte Carlo kernel and the netlist's bench, so the capacitors move no signal figure
//! (mapping, response, noise, tolerance spread); the tolerance analysis leaves them out of
//! its parameters ([`crate::circuit::is_decoupling`]). They are in the model for the part
//! list, the schematic and the netlist, and continue the C numbering after the signal parts,
//! whose designators they leave as they were.

use crate::circuit::{designator_key, Builder, Circuit, PartKind, PartRole, RailSide, Stage, StageKind, StageRole};
use crate::units::{format, Quantity};

/// The local capacitor at each amplifier supply pin: 100 nF X7R ceramic, placed at the pin
/// (common practice).
pub const LOCAL_DECOUPLING: f64 = 100e-9;
/// The bulk capacitor of each rail: 10 µF X7R ceramic where the rail enters the board
/// (common practice).
pub const BULK_DECOUPLING: f64 = 10e-6;
/// Tolerance of both: ±10 %, the usual grade of an X7R part (common practice).
pub const DECOUPLING_TOLERANCE: f64 = 0.1;

/// Adds the supply decoupling to `c`: for each rail (the bench's `Rail` parts, positive
/// first), a local capacitor from that rail to ground for every amplifier whose supply pin
/// is on it (in designator order), then the rail's bulk capacitor; all in one stage of kind
/// [`StageKind::SupplyDecoupling`]. A circuit without amplifiers or rails is left alone.
pub fn decouple(c: &mut Circuit) {
    let mut rails: Vec<(String, String, RailSide)> = c
        .parts
        .iter()
        .filter(|p| p.bench && p.role == Some(PartRole::Rail) && p.value.is_finite() && p.value != 0.0)
        .filter_map(|p| {
            let side = if p.value > 0.0 { RailSide::Positive } else { RailSide::Negative };
            Some((p.nodes.first()?.clone(), p.reference.clone(), side))
        })
        .collect();
    crate::order::sort_by_key(&mut rails, |r| r.2 == RailSide::Negative);
    // Each amplifier with its number and its V+ and V− pins' nodes.
    let amps: Vec<(String, u32, [String; 2])> = c
        .build_parts()
        .into_iter()
        .filter(|p| p.kind == PartKind::OpAmp && p.nodes.len() >= 5)
        .map(|p| (p.reference.clone(), designator_key(&p.reference).1 as u32, [p.nodes[2].clone(), p.nodes[3].clone()]))
        .collect();
    if amps.is_empty() || rails.is_empty() {
        return;
    }
    let tol = Some(DECOUPLING_TOLERANCE);
    let mut bld = Builder::resume(std::mem::take(&mut c.parts));
    let mut parts = Vec::new();
    for (node, name, side) in &rails {
        let (pin, sign, which) = match side {
            RailSide::Positive => (0, "+", "positive"),
            RailSide::Negative => (1, "−", "negative"),
        };
        for (u, n, _) in amps.iter().filter(|a| &a.2[pin] == node) {
            let role = PartRole::LocalDecoupling { amplifier: *n, rail: *side };
            let what = format!("local decoupling of {u}'s {sign} supply pin, at the pin");
            let nodes = [node.as_str(), crate::circuit::GND];
            parts.push(bld.add(
                PartKind::Capacitor,
                LOCAL_DECOUPLING,
                tol,
                &nodes,
                (StageRole::Decoupling, role),
                &what,
            ));
        }
        let role = PartRole::BulkDecoupling(*side);
        let what = format!("bulk decoupling of the {which} rail {name}, where it enters the board");
        let nodes = [node.as_str(), crate::circuit::GND];
        parts.push(bld.add(PartKind::Capacitor, BULK_DECOUPLING, tol, &nodes, (StageRole::Decoupling, role), &what));
    }
    c.parts = bld.parts;
    c.stages.push(Stage {
        role: StageRole::Decoupling,
        kind: StageKind::SupplyDecoupling,
        description: format!(
            "Supply decoupling: {} X7R ceramic at each amplifier's supply pins and {} X7R ceramic on each rail",
            format(LOCAL_DECOUPLING, Quantity::Capacitance),
            format(BULK_DECOUPLING, Quantity::Capacitance)
        ),
        parts,
    });
}
