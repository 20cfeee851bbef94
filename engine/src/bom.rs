//! The part list: one row per distinct part, with ratings from the operating point.
//!
//! Derived from the circuit model and the solver, never re-derived:
//!
//! * **Stress.** Each part's voltage is taken at the operating point and at the extremes of
//!   the signal (DC coupling: the sensor at its min and max; AC coupling: the operating point
//!   plus and minus the mid-band swing of each node). Resistor power is the largest V²/R;
//!   the drive resistor's also the power it takes with the amplifier at its swing limit and
//!   the pin held at its range (the converter protection's claim, [`crate::synth::drive`]).
//! * **Resistor rating** (common practice): the smallest standard power rating of at least
//!   twice the dissipation (50 % derating), 63 mW at the least.
//! * **Capacitor working voltage** (common practice): the smallest standard rating of at least
//!   twice the largest voltage across the part — class-2 ceramics lose capacitance under DC
//!   bias and electrolytics last longer well below their rating — and 6.3 V at the least.
//! * **Capacitor kind**: the technology chosen on the built circuit (`design::capacitors`,
//!   the rules in `ratings`). A polarised capacitor's + terminal goes to the node the
//!   operating point makes more positive; if the DC across it is under 0.1 V or changes sign
//!   over the signal swing, a non-polarised type is required instead.
//! * **Supply decoupling** (stage `decoupling`, by role; values in [`crate::synth::decouple`]):
//!   X7R ceramic whatever the value (the 10 µF bulk part included: a ceramic, not an
//!   electrolytic), rated by the working-voltage rule from the rail across it.
//! * **Amplifier** as a list of requirements (never a product name).
//!
//! [`to_csv`] writes the rows as CSV per RFC 4180 (CRLF line ends, fields with a comma, quote
//! or line break quoted, quotes doubled).

use serde::Serialize;

use crate::circuit::{is_decoupling, Circuit, Part, PartKind, PartRole, StageRole};
use crate::design::Design;
use crate::request::{Coupling, Request};
use crate::solve::Solver;
use crate::units::{format, Quantity};
use crate::values;

use crate::ratings::{self, Dielectric, RATING_MARGIN};

/// One row of the part list.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BomRow {
    pub designators: Vec<String>,
    pub quantity: usize,
    pub kind: String,
    /// Value as text with its unit ("10 kΩ"); for the amplifier, "see requirements".
    pub value: String,
    pub value_si: f64,
    /// e.g. "±1 %".
    pub tolerance: String,
    /// IEC 60062 letter, where the tolerance has one.
    pub tolerance_code: String,
    /// Recommended rating ("≥ 0.063 W", "≥ 16 V").
    pub rating: String,
    /// Dielectric or construction, with orientation for polarised parts.
    pub construction: String,
    /// Worst stress found (W for resistors, V for capacitors).
    pub stress: f64,
    pub notes: String,
}

/// The part list of a design (empty when the design has no circuit).
pub fn bom(design: &Design) -> Vec<BomRow> {
    let Some(c) = &design.circuit else { return Vec::new() };
    let stress = Stress::of(&design.request, c);
    let mut rows: Vec<BomRow> = Vec::new();
    for p in c.build_parts() {
        let row = match p.kind {
            PartKind::Resistor => resistor_row(p, &stress, drive_fault(design, p, |d| d.fault_power)),
            PartKind::Capacitor => capacitor_row(p, &stress),
            PartKind::OpAmp => amplifier_row(p, design),
            PartKind::Diode => diode_row(p, &stress, drive_fault(design, p, |d| d.clamp_current)),
            PartKind::VoltageSource | PartKind::CurrentSource => continue,
        };
        // One row per distinct part: same kind, value, tolerance, rating and construction
        // (every amplifier of the design is the same part, meeting the same requirements).
        match rows.iter_mut().find(|r| {
            r.kind == row.kind
                && r.value == row.value
                && r.tolerance == row.tolerance
                && r.rating == row.rating
                && r.construction == row.construction
        }) {
            Some(r) => {
                r.designators.extend(row.designators);
                r.quantity += 1;
                r.stress = r.stress.max(row.stress);
                if !row.notes.is_empty() && !r.notes.contains(&row.notes) {
                    r.notes = format!("{}; {}", r.notes, row.notes);
                }
            }
            None => rows.push(row),
        }
    }
    rows
}

/// CSV per RFC 4180 with a header line.
pub fn to_csv(rows: &[BomRow]) -> String {
    let mut out = String::new();
    let header =
        ["designators", "quantity", "kind", "value", "tolerance", "tolerance_code", "rating", "construction", "notes"];
    push_record(&mut out, header.iter().map(|s| s.to_string()));
    for r in rows {
        push_record(
            &mut out,
            [
                r.designators.join(" "),
                r.quantity.to_string(),
                r.kind.clone(),
                r.value.clone(),
                r.tolerance.clone(),
                r.tolerance_code.clone(),
                r.rating.clone(),
                r.construction.clone(),
                r.notes.clone(),
            ]
            .into_iter(),
        );
    }
    out
}

fn push_record(out: &mut String, fields: impl Iterator<Item = String>) {
    let quoted: Vec<String> = fields
        .map(|f| if f.contains([',', '"', '\r', '\n']) { format!("\"{}\"", f.replace('"', "\"\"")) } else { f })
        .collect();
    out.push_str(&quoted.join(","));
    out.push_str("\r\n");
}

/// Node voltages at the operating point and at the signal extremes.
struct Stress {
    op: Vec<(String, f64)>,
    extremes: Vec<Vec<(String, f64)>>,
}

impl Stress {
    fn of(req: &Request, c: &Circuit) -> Stress {
        let solver = Solver::new(c);
        let s = &req.source;
        let mid = 0.5 * (s.min + s.max);
        let op = solver.dc(mid).map(|d| d.voltages).unwrap_or_default();
        let extremes = match s.coupling {
            Coupling::Dc => [s.min, s.max].iter().filter_map(|&x| solver.dc(x).ok().map(|d| d.voltages)).collect(),
            Coupling::Ac => {
                let f = s.band_centre();
                let half = 0.5 * (s.max - s.min);
                [-1.0, 1.0]
                    .iter()
                    .map(|sign| {
                        op.iter()
                            .map(|(n, v)| {
                                let h = solver.transfer(f, n).map(|h| h.re).unwrap_or(0.0);
                                (n.clone(), v + sign * h * half)
                            })
                            .collect()
                    })
                    .collect()
            }
        };
        Stress { op, extremes }
    }

    fn v(set: &[(String, f64)], node: &str) -> f64 {
        set.iter().find(|(n, _)| n == node).map(|(_, v)| *v).unwrap_or(0.0)
    }

    /// Voltage across `p` (first node minus second) at the operating point and its extremes.
    fn across(&self, p: &Part) -> (f64, f64, f64) {
        let d = |set: &[(String, f64)]| Self::v(set, &p.nodes[0]) - Self::v(set, &p.nodes[1]);
        let at_op = d(&self.op);
        let (mut lo, mut hi) = (at_op, at_op);
        for e in &self.extremes {
            let x = d(e);
            lo = lo.min(x);
            hi = hi.max(x);
        }
        (at_op, lo, hi)
    }
}

fn tolerance_text(t: Option<f64>) -> (String, String) {
    match t {
        Some(t) => {
            let text = format!("±{}", crate::units::format_percent(t));
            (text, values::tolerance_letter(t).map(|c| c.to_string()).unwrap_or_default())
        }
        None => (String::new(), String::new()),
    }
}

/// What the drive's overdrive puts on `p` (its resistor or its clamp), 0 for other parts.
fn drive_fault(design: &Design, p: &Part, of: fn(&crate::synth::drive::DriveDesign) -> f64) -> f64 {
    match (&design.drive, p.role) {
        (Some(d), Some(PartRole::DriveResistor | PartRole::Clamp)) => of(d),
        _ => 0.0,
    }
}

fn resistor_row(p: &Part, s: &Stress, fault_power: f64) -> BomRow {
    let (_, lo, hi) = s.across(p);
    let v = lo.abs().max(hi.abs());
    let power = (v * v / p.value).max(fault_power);
    let rating = ratings::power_rating(power).unwrap_or(f64::NAN);
    let (tolerance, tolerance_code) = tolerance_text(p.tolerance);
    BomRow {
        designators: vec![p.reference.clone()],
        quantity: 1,
        kind: "resistor".to_string(),
        value: format(p.value, Quantity::Resistance),
        value_si: p.value,
        tolerance,
        tolerance_code,
        rating: if rating.is_finite() {
            format!("≥ {}", format(rating, Quantity::Power))
        } else {
            format!("≥ {} (use a power resistor)", format(RATING_MARGIN * power, Quantity::Power))
        },
        construction: if p.value > values::STANDARD_RESISTOR_MAX * (1.0 + 1e-9) {
            format!(
                "special high-value part (glass or ceramic body): beyond the {} of ordinary series parts",
                format(values::STANDARD_RESISTOR_MAX, Quantity::Resistance)
            )
        } else {
            "thin-film or metal-film".to_string()
        },
        stress: power,
        notes: String::new(),
    }
}

fn capacitor_row(p: &Part, s: &Stress) -> BomRow {
    let (at_op, lo, hi) = s.across(p);
    let v = lo.abs().max(hi.abs());
    let rating = ratings::voltage_rating(v).unwrap_or(f64::NAN);
    let sets_corner = matches!(p.stage, StageRole::Filter | StageRole::Drive);
    let one_sign = (lo > 0.1 && hi > 0.1) || (lo < -0.1 && hi < -0.1);
    let construction = if is_decoupling(p) {
        "X7R ceramic (supply decoupling)".to_string()
    } else {
        match dielectric_of(p) {
            Dielectric::C0g if sets_corner => {
                "C0G/NP0 ceramic (sets a filter corner: no class-2 dielectric)".to_string()
            }
            Dielectric::C0g => "C0G/NP0 ceramic".to_string(),
            Dielectric::Film if sets_corner => {
                "film (polypropylene or polyphenylene sulphide; sets a filter corner)".to_string()
            }
            Dielectric::Film => "film (polyester or polypropylene)".to_string(),
            Dielectric::Class2 if p.value >= ratings::ELECTROLYTIC_FROM => {
                "X5R/X7R multilayer ceramic (an electrolytic's leakage would move the rest level here)".to_string()
            }
            Dielectric::Class2 => "X7R ceramic".to_string(),
            Dielectric::Electrolytic if one_sign => {
                let plus = if at_op >= 0.0 { &p.nodes[0] } else { &p.nodes[1] };
                format!("aluminium electrolytic, polarised: + to node {plus}")
            }
            Dielectric::Electrolytic => {
                "non-polarised (bipolar) electrolytic: the DC across it is too small or changes sign".to_string()
            }
        }
    };
    let (tolerance, tolerance_code) = tolerance_text(p.tolerance);
    BomRow {
        designators: vec![p.reference.clone()],
        quantity: 1,
        kind: "capacitor".to_string(),
        value: format(p.value, Quantity::Capacitance),
        value_si: p.value,
        tolerance,
        tolerance_code,
        rating: if rating.is_finite() {
            format!("≥ {}", format(rating, Quantity::Voltage))
        } else {
            format!("≥ {}", format(RATING_MARGIN * v, Quantity::Voltage))
        },
        construction,
        stress: v,
        // Below a millivolt the DC across is the amplifiers' finite gain, not a bias: say so
        // instead of printing microvolts that read like a design value.
        notes: if at_op.abs() < 1e-3 {
            "about 0 V across at rest".to_string()
        } else {
            format!("{} across at rest", format(at_op, Quantity::Voltage))
        },
    }
}

/// The technology chosen for `p` on the built circuit, or by its place alone for a circuit
/// built by hand.
pub fn dielectric_of(p: &Part) -> Dielectric {
    p.dielectric.unwrap_or_else(|| {
        let sets_corner = matches!(p.stage, StageRole::Filter | StageRole::Drive);
        let in_signal_path = matches!(p.stage, StageRole::Coupling | StageRole::Gain);
        ratings::dielectric_by_place(p.value, sets_corner, in_signal_path)
    })
}

fn diode_row(p: &Part, s: &Stress, current: f64) -> BomRow {
    let (_, lo, hi) = s.across(p);
    let reverse = (-lo).max(-hi).max(0.0);
    BomRow {
        designators: vec![p.reference.clone()],
        quantity: 1,
        kind: "diode".to_string(),
        value: format!("Schottky, V_F ≈ {} at 1 mA", format(p.value, Quantity::Voltage)),
        value_si: p.value,
        tolerance: String::new(),
        tolerance_code: String::new(),
        rating: format!(
            "reverse ≥ {}, ≥ {}",
            format(ratings::voltage_rating(reverse).unwrap_or(6.3), Quantity::Voltage),
            format((RATING_MARGIN * current).max(10e-3), Quantity::Current)
        ),
        construction: "small-signal Schottky, low leakage".to_string(),
        stress: reverse,
        notes: format!(
            "anode {}, cathode {}",
            p.nodes.first().map(String::as_str).unwrap_or(""),
            p.nodes.get(1).map(String::as_str).unwrap_or("")
        ),
    }
}

fn amplifier_row(p: &Part, d: &Design) -> BomRow {
    let notes = d.requirements.as_ref().map(|r| r.summary.join("; ")).unwrap_or_default();
    BomRow {
        designators: vec![p.reference.clone()],
        quantity: 1,
        kind: "amplifier".to_string(),
        value: format!(
            "GBW ≥ {}",
            format(d.requirements.as_ref().map(|r| r.gbw_min).unwrap_or(p.value), Quantity::Frequency)
        ),
        value_si: p.value,
        tolerance: String::new(),
        tolerance_code: String::new(),
        rating: format!("supply {}", format(d.rails.total(), Quantity::Voltage)),
        construction: "operational amplifier meeting the requirements".to_string(),
        stress: 0.0,
        notes,
    }
}
