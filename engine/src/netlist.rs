//! SPICE3 netlist export of the circuit model.
//!
//! The netlist uses only R, C, V, E, G and D elements plus a `.subckt` and the `.model`s it
//! defines itself (the amplifier's clamp, and a Schottky for clamps at the converter pin),
//! so any SPICE3-compatible simulator runs it with no library. The amplifier
//! subcircuit is the solver's macro-model ([`crate::amplifier::model`]): a transconductance into a
//! node loaded by R and C (finite DC gain, one dominant pole at GBW / gain), clamped by two
//! diodes to the swing limits measured from the supply pins, and a unity-gain buffer to the
//! output. The diodes use a small emission coefficient so that the clamp knee is a few
//! millivolts and their leakage is negligible in the linear region.
//!
//! Bench names are fixed so scripts can rely on them: the sensor is `VSENSE` (DC at the
//! middle of its range, `AC 1`) behind `RSENSE`; the rails are `VPOS` (and `VNEG`); the
//! converter input node is `adc`, loaded by `RADC`.

use crate::circuit::{is_sensor_source, Circuit, PartKind};
use crate::request::Request;

/// Options of the export.
#[derive(Debug, Clone, Copy, Default)]
pub struct NetlistConfig {
    /// Add analysis commands: a DC sweep over the source range and an AC sweep over the band.
    pub testbench: bool,
}

/// Name of the amplifier subcircuit.
pub const AMP_SUBCKT: &str = "RFAMP";
/// Name of the clamp diode model.
pub const SCHOTTKY_MODEL: &str = "RFSCHOTTKY";

/// Writes the netlist for `circuit`, designed for `req`.
pub fn netlist(req: &Request, circuit: &Circuit, cfg: NetlistConfig) -> String {
    let mut out = String::new();
    let amp = &circuit.amplifier;
    out.push_str(&format!("* Rangefit design: {}\n", one_line(&req.name)));
    out.push_str(&format!("* rangefit-engine {}, request version {}\n", env!("CARGO_PKG_VERSION"), req.version));
    out.push_str(&format!("* amplifier model: {}\n", one_line(&amp.class)));
    out.push_str(&format!(
        "* GBW {} Hz, open-loop gain {}, output swing {} V from the lower rail and {} V from the upper\n",
        num(amp.gbw),
        num(amp.open_loop_gain),
        num(amp.swing_low),
        num(amp.swing_high)
    ));
    let m = amp.macro_model();
    out.push_str(&format!(".subckt {AMP_SUBCKT} inp inn vcc vee out\n"));
    out.push_str(&format!("G1 0 x inp inn {}\n", num(m.gm)));
    out.push_str(&format!("R1 x 0 {}\n", num(m.load_resistance)));
    out.push_str(&format!("C1 x 0 {}\n", num(m.load_capacitance)));
    out.push_str(&format!("VH vcc nh DC {}\n", num(m.swing_high)));
    out.push_str(&format!("VL nl vee DC {}\n", num(m.swing_low)));
    out.push_str("D1 x nh RFCLAMP\nD2 nl x RFCLAMP\nE1 out 0 x 0 1\n");
    out.push_str(&format!(".ends {AMP_SUBCKT}\n"));
    out.push_str(".model RFCLAMP D(IS=1e-14 N=0.01)\n");
    if circuit.parts.iter().any(|p| p.kind == PartKind::Diode) {
        // Clamp diodes at the converter pin: a low-leakage Schottky (about 0.35 V at 1 mA).
        out.push_str(&format!(".model {SCHOTTKY_MODEL} D(IS=1e-9 N=1.05 RS=2)\n"));
    }
    for p in &circuit.parts {
        let nodes = p.nodes.join(" ");
        let line = match p.kind {
            PartKind::Resistor => format!("{} {} {}", p.reference, nodes, num(p.value)),
            PartKind::Capacitor => format!("{} {} {}", p.reference, nodes, num(p.value)),
            PartKind::VoltageSource if is_sensor_source(p) => {
                format!("{} {} DC {} AC 1", p.reference, nodes, num(p.value))
            }
            PartKind::VoltageSource => format!("{} {} DC {}", p.reference, nodes, num(p.value)),
            PartKind::CurrentSource if is_sensor_source(p) => {
                format!("{} {} DC {} AC 1", p.reference, nodes, num(p.value))
            }
            PartKind::CurrentSource => format!("{} {} DC {}", p.reference, nodes, num(p.value)),
            PartKind::OpAmp => format!("X{} {} {}", p.reference, nodes, AMP_SUBCKT),
            PartKind::Diode => format!("{} {} {}", p.reference, nodes, SCHOTTKY_MODEL),
        };
        // Comments on their own line: SPICE3 has no inline comment character.
        out.push_str(&format!("* {}: {}\n", p.reference, one_line(&p.purpose)));
        out.push_str(&line);
        out.push('\n');
    }
    if cfg.testbench {
        let s = &req.source;
        let step = (s.max - s.min) / 100.0;
        // Saving the output node keeps every analysis's data (some simulators otherwise keep
        // only the last analysis when several are in one deck).
        out.push_str(".save v(adc)\n.op\n");
        if step > 0.0 {
            let sweep = circuit.sensor_source().map_or("VSENSE", |p| p.reference.as_str());
            out.push_str(&format!(".dc {sweep} {} {} {}\n", num(s.min), num(s.max), num(step)));
            out.push_str(".print dc v(adc)\n");
        }
        let f1 = if s.band_low > 0.0 { s.band_low / 100.0 } else { (s.band_high / 1e4).max(1e-2) };
        let f2 = (s.band_high * 100.0).max(f1 * 10.0);
        out.push_str(&format!(".ac dec 20 {} {}\n", num(f1), num(f2)));
        out.push_str(".print ac vdb(adc) vp(adc)\n");
    }
    out.push_str(".end\n");
    out
}

/// A number in a form every SPICE3 reader accepts (no unit suffix, `e` exponent).
fn num(x: f64) -> String {
    if x == 0.0 {
        return "0".to_string();
    }
    let s = format!("{x:.9e}");
    // Trim zeros in the mantissa: 4.700000000e3 → 4.7e3.
    match s.split_once('e') {
        Some((m, e)) => {
            let m = if m.contains('.') { m.trim_end_matches('0').trim_end_matches('.') } else { m };
            format!("{m}e{e}")
        }
        None => s,
    }
}

/// Text safe inside a one-line SPICE comment.
fn one_line(s: &str) -> String {
    s.chars().map(|c| if c.is_control() { ' ' } else { c }).collect()
}
