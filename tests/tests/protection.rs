//! Protection that the parts survive, shown in ngspice on the exported netlist: every fault
//! claim (a sensor driven beyond a rail, the drive at the amplifier's swing limit, a loop
//! terminal) puts no more into a series part than its rating in the part list allows, and
//! the claim the engine made before did; a converter pin that cannot settle is shown not
//! settling with the converter's sampling capacitor switched in, and the remedies the check
//! computes are shown settling. Requests are scenarios of our own (tests/REFERENCES.md §14).

use rangefit_engine::bom::bom;
use rangefit_engine::circuit::{Circuit, PartKind, PartRole};
use rangefit_engine::diag::Severity;
use rangefit_engine::netlist::{netlist, NetlistConfig};
use rangefit_engine::ratings::{fault_across, power_rating, RATING_MARGIN, WORKING_VOLTAGES};
use rangefit_engine::synth::drive::{self, CLAMP_CURRENT, CLAMP_DROP};
use rangefit_engine::synth::front::series_fault;
use rangefit_engine::{design, Design, Request};
use rangefit_tests::rows::{at_most, check, fact, row_rel, Row};
use rangefit_tests::spice;
use serde_json::{json, Value};

const OP: &str = "ngspice operating point of the exported netlist (tests/REFERENCES.md, ngspice)";
const TRAN: &str = "ngspice transient of the exported netlist with a switched sampling capacitor (§14)";
const RULE: &str = "rating rule: half the power rating, the case's working voltage (§14, from memory)";

fn request(v: &Value) -> Request {
    Request::from_json(&v.to_string()).unwrap_or_else(|e| panic!("request does not read: {e}\n{v}"))
}

fn demo(id: &str) -> Design {
    let d = rangefit_engine::demos::find(id).unwrap_or_else(|| panic!("demo {id}"));
    design(&Request::from_json(d.json).expect("demo reads"))
}

fn errors(d: &Design) -> Vec<String> {
    d.checks.iter().filter(|c| c.severity == Severity::Error).map(|c| format!("{}: {}", c.id, c.message)).collect()
}

fn message<'a>(d: &'a Design, id: &str) -> &'a str {
    d.checks.iter().find(|c| c.id == id).map(|c| c.message.as_str()).unwrap_or_else(|| panic!("no {id} check"))
}

fn circuit(d: &Design) -> &Circuit {
    d.circuit.as_ref().expect("a circuit")
}

/// The exported netlist with `extra` elements before its `.end`.
fn exported_with(d: &Design, extra: &str) -> String {
    let net = netlist(&d.request, circuit(d), NetlistConfig { testbench: false });
    let body = net.trim_end().strip_suffix(".end").unwrap_or(&net).to_string();
    format!("{body}\n{extra}\n.end\n")
}

/// The rating the part list gives `reference`, W (its "≥ x" text read back).
fn listed_rating(d: &Design, reference: &str) -> f64 {
    let rows = bom(d);
    let r = rows.iter().find(|r| r.designators.iter().any(|x| x == reference)).expect("a part-list row");
    let text = r.rating.trim_start_matches("≥ ");
    let (num, unit) = text.split_once(' ').expect("value and unit");
    let scale = match unit {
        "mW" => 1e-3,
        "W" => 1.0,
        u => panic!("rating unit {u}"),
    };
    num.parse::<f64>().expect("a number") * scale
}

/// The amplifier input's protection as the engine assumes it: a clamp 0.3 V beyond the rail
/// at the injection limit (IS chosen so that 5 mA gives 0.3 V with N = 1).
const INPUT_CLAMP: &str = ".model DINPUT D(IS=4.5e-8 N=1)";

/// A sensor driven beyond a rail: at the fault the engine used to claim (series·I_limit +
/// 0.3 V beyond a rail) the series resistor of the tilt mast's input network takes watts
/// while the part list rates it 63 mW; at the claim it makes now, ngspice finds at most
/// half the listed rating in it, the case's working voltage across it and no more than the
/// injection limit into the input's protection, on both sides.
#[test]
fn a_fault_beyond_a_rail_stays_within_the_series_resistor_as_listed() {
    let mut rows: Vec<Row> = Vec::new();
    for id in ["mast-tilt", "boiler-pressure"] {
        let d = demo(id);
        let c = circuit(&d);
        let terms = c.sensor_terminals();
        let f = series_fault(&d.request, c, &terms).expect("a series resistor");
        let part = c
            .parts
            .iter()
            .find(|p| !p.bench && p.kind == PartKind::Resistor && p.value == f.resistance)
            .expect("the series part");
        let inp = part.nodes.iter().find(|n| !terms.contains(n)).expect("the amplifier side").clone();
        let neg = if d.rails.is_dual() { "vneg" } else { "0" };
        let net = exported_with(&d, &format!("DINP {inp} vpos DINPUT\nDINN {neg} {inp} DINPUT\n{INPUT_CLAMP}"));
        let limit = d.request.destination.injection_limit;
        let old = f.resistance * limit + CLAMP_DROP;
        let faults = [d.rails.pos + old, d.rails.pos + f.beyond_rail, d.rails.neg - f.beyond_rail];
        let alters: Vec<Vec<String>> = faults.iter().map(|v| vec![format!("alter VSENSE dc = {v:e}")]).collect();
        let ops = spice::operating_points(id, &net, &alters, &["sense", &inp]);
        let power = |o: &Vec<f64>| (o[0] - o[1]).powi(2) / f.resistance;
        let listed = listed_rating(&d, &part.reference);
        rows.push(at_most(format!("{id}: the claim's rating within the listed one, W"), f.rating, listed, 0.0, RULE));
        rows.push(fact(
            format!(
                "{id}: at the old claim {old:.1} V beyond a rail ngspice puts {:.2} W into {} (listed {listed} W)",
                power(&ops[0]),
                part.reference
            ),
            power(&ops[0]) > 10.0 * listed,
            OP,
        ));
        for (k, side) in [(1, "above the upper rail"), (2, "below the lower rail")] {
            let p = power(&ops[k]);
            let across = (ops[k][0] - ops[k][1]).abs();
            let tag = format!("{id}: {:.1} V {side}", f.beyond_rail);
            rows.push(at_most(format!("{tag}: ngspice power in the part, W"), p, listed / RATING_MARGIN, 1e-4, OP));
            rows.push(row_rel(format!("{tag}: engine's power against ngspice, W"), f.power, p, 0.05, 0.0, OP));
            rows.push(at_most(format!("{tag}: volts across the part"), across, WORKING_VOLTAGES[0], 0.01, RULE));
            rows.push(at_most(
                format!("{tag}: current into the input's protection, A"),
                across / part.value,
                limit,
                1e-6,
                OP,
            ));
        }
        rows.push(fact(
            format!("{id}: the check states the claim and the rating"),
            message(&d, "input_protection").contains(&format!("{} in the", fmt_power(f.power))),
            "design contract",
        ));
    }
    check(&rows);
}

fn fmt_power(w: f64) -> String {
    rangefit_engine::units::format(w, rangefit_engine::units::Quantity::Power)
}

/// A winch load cell's amplifier on `supplies` into a 0 … 2.5 V, 12-bit converter: the
/// amplifier can drive the pin beyond the converter's range.
fn winch(supplies: Value, rate: &str, acquisition: Option<&str>, gbw: &str) -> Request {
    let mut dst = json!({"min": 0, "max": 2.5, "bits": 12, "sample_rate": rate, "impedance": "1M"});
    if let Some(t) = acquisition {
        dst["acquisition_time"] = json!(t);
    }
    request(&json!({
        "version": 1, "name": "Harbour winch load cell",
        "source": {"kind": "single_ended", "min": 0, "max": "50 mV", "coupling": "dc", "impedance": "100",
                   "band_high": "2 kHz"},
        "destination": dst,
        "supplies": supplies,
        "amplifier": {"gbw": gbw},
        "parts": {"resistor_series": "E96"}
    }))
}

/// The node that drives the drive resistor, and the resistor's designator.
fn drive_nodes(c: &Circuit) -> (String, String) {
    let r = c.with_role(PartRole::DriveResistor).expect("a drive resistor");
    let input = r.nodes.iter().find(|n| *n != "adc").expect("its input").clone();
    (input, r.reference.clone())
}

/// The converter's own protection (silicon diodes to its range, about 0.69 V at 5 mA) and,
/// optionally, Schottky clamps from the pin to both ends of the range.
fn converter_protection(top: f64, clamps: bool) -> String {
    let mut s = format!("VTOP ctop 0 DC {top:e}\nDCU adc ctop DCONV\nDCL 0 adc DCONV\n.model DCONV D(IS=1e-14 N=1)\n");
    if clamps {
        // The netlist's own Schottky model (netlist.rs), named apart from it.
        s.push_str("DKU adc ctop DKLAMP\nDKL 0 adc DKLAMP\n.model DKLAMP D(IS=1e-9 N=1.05 RS=2)\n");
    }
    s
}

/// The drive at the amplifier's swing limit: with the sensor overloaded both ways, ngspice
/// finds the last amplifier at the engine's swing limits; the drive resistor takes at most
/// half the rating the part list gives it (which follows this fault), the converter's own
/// protection no more than the injection limit, and the ground clamp takes the current
/// below 0 V within its rating.
#[test]
fn the_drive_resistor_and_the_clamp_take_the_overdrive_as_listed() {
    let mut rows: Vec<Row> = Vec::new();
    let d = design(&winch(json!([12, -12]), "100 kHz", None, "10 MHz"));
    let dd = d.drive.as_ref().expect("a drive");
    rows.push(fact("the ground clamp is built", dd.clamp_to_ground, "design contract"));
    let c = circuit(&d);
    let (input, reference) = drive_nodes(c);
    let clamp = c.with_role(PartRole::Clamp).expect("a clamp").reference.clone();
    let net = exported_with(&d, &converter_protection(2.5, false));
    let alters = [vec!["alter VSENSE dc = 1".to_string()], vec!["alter VSENSE dc = -1".to_string()]];
    let ops = spice::operating_points("winch-overdrive", &net, &alters, &[&input, "adc"]);
    let (lo, hi) = d.amplifier.output_limits(d.rails);
    rows.push(row_rel("overload up: the amplifier at its upper swing limit, V", ops[0][0], hi, 0.0, 0.02, OP));
    rows.push(row_rel("overload down: the amplifier at its lower swing limit, V", ops[1][0], lo, 0.0, 0.02, OP));
    let listed = listed_rating(&d, &reference);
    rows.push(row_rel(
        "the part list rates the drive resistor for the overdrive, W",
        listed,
        power_rating(dd.fault_power).expect("a standard rating"),
        0.0,
        1e-12,
        RULE,
    ));
    for (k, what) in [(0, "up"), (1, "down")] {
        let i = (ops[k][0] - ops[k][1]).abs() / dd.resistor;
        let p = i * i * dd.resistor;
        rows.push(at_most(
            format!("overload {what}: ngspice power in {reference}, W"),
            p,
            listed / RATING_MARGIN,
            1e-5,
            OP,
        ));
        rows.push(at_most(format!("overload {what}: engine power covers ngspice's, W"), p, dd.fault_power, 1e-6, OP));
    }
    // Upward the converter's own diode takes the current; downward the clamp must.
    let i_up = (ops[0][0] - ops[0][1]) / dd.resistor;
    rows.push(at_most("overload up: current into the converter's protection, A", i_up, dd.injection_limit, 1e-6, OP));
    let control = "alter VSENSE dc = -1\nop\nprint i(VTOP)\nprint v(adc)";
    let net = net.replace("DCL 0 adc DCONV", "DCL 0 adcl DCONV\nVMEAS adcl adc DC 0");
    let v = spice::printed("winch-clamp", &net, &format!("{control}\nprint i(VMEAS)"));
    let into_converter = v.iter().find(|x| x.0.contains("vmeas")).map(|x| x.1.abs()).expect("i(vmeas)");
    let total = (ops[1][1] - ops[1][0]) / dd.resistor;
    rows.push(at_most(
        format!("overload down: {clamp} leaves the converter's protection {into_converter:.2e} A of {total:.2e} A"),
        into_converter,
        0.01 * total,
        0.0,
        OP,
    ));
    rows.push(at_most("overload down: current into the clamp, A", total, CLAMP_CURRENT, 1e-6, OP));
    rows.push(row_rel("engine's clamp current against ngspice, A", dd.clamp_current, total, 0.05, 0.0, OP));
    let diode = bom(&d).into_iter().find(|r| r.designators.contains(&clamp)).expect("the clamp's row");
    rows.push(fact(
        format!("the clamp's row is rated for twice its current ({})", diode.rating),
        diode.rating.ends_with(&format!("≥ {}", fmt_current(RATING_MARGIN * dd.clamp_current))),
        RULE,
    ));
    rows.push(fact(format!("no error-severity check ({:?})", errors(&d)), errors(&d).is_empty(), "design contract"));
    check(&rows);
}

fn fmt_current(a: f64) -> String {
    rangefit_engine::units::format(a, rangefit_engine::units::Quantity::Current)
}

/// The pin's error at the end of the `n`-th acquisition, V, against its rest level: the
/// converter's sampling capacitor (`c_in`) switched onto the pin for `t_acq` of each period
/// and discharged for the rest (a full-scale step every sample), the sensor at the top of
/// its range.
fn sampled_error(tag: &str, d: &Design, net: &str, fs: f64, t_acq: f64) -> f64 {
    sampled_error_after(tag, d, net, (fs, t_acq), 8, Some(t_acq / 400.0))
}

/// [`sampled_error`] after `n` periods, with ngspice's largest step `max_step` (its own
/// choice when `None`).
fn sampled_error_after(tag: &str, d: &Design, net: &str, timing: (f64, f64), n: u32, max_step: Option<f64>) -> f64 {
    let (fs, t_acq) = timing;
    let (c_in, top) = (d.request.destination.input_capacitance, d.request.source.max);
    let period = 1.0 / fs;
    let extra = format!(
        "VACQ acq 0 PULSE(0 1 {p:e} 1e-9 1e-9 {t:e} {p:e})\nVRST rst 0 PULSE(1 0 {p:e} 1e-9 1e-9 {t:e} {p:e})\n\
         SACQ adc cs acq 0 SWM\nSRST cs 0 rst 0 SWM\nCIN cs 0 {c_in:e}\n.model SWM SW(VT=0.5 VH=0.1 RON=1 ROFF=1e13)\n",
        p = period,
        t = t_acq - 2e-9
    );
    let body = net.trim_end().strip_suffix(".end").unwrap_or(net);
    let deck = format!("{body}\n{extra}.options reltol=1e-6 abstol=1e-14 vntol=1e-8\n.end\n");
    let t_end = (f64::from(n) + 1.0) * period + t_acq - 5e-9;
    let step = max_step.map_or(String::new(), |m| format!(" 0 {m:e}"));
    let control = format!(
        "alter VSENSE dc = {top:e}\nop\nprint v(adc)\ntran {:e} {:e}{step}\nmeas tran vs FIND v(cs) AT={:e}",
        period / 2000.0,
        t_end + 1e-9,
        t_end
    );
    let v = spice::printed(tag, &deck, &control);
    let rest = v.iter().find(|x| x.0 == "v(adc)").expect("v(adc)").1;
    let sampled = v.iter().find(|x| x.0 == "vs").expect("vs").1;
    (sampled - rest).abs()
}

fn half_lsb(d: &Design) -> f64 {
    let dst = &d.request.destination;
    0.5 * (dst.max - dst.min) / 2f64.powi(dst.bits as i32)
}

/// A pin that cannot settle: ngspice with the converter's sampling capacitor switched in
/// finds the sampled value off by more than ½ LSB where the check warns; the acquisition
/// time the check computes settles (the check is then ok, and ngspice agrees); the smaller
/// resistor with clamps that the check computes settles too and keeps the clamps within
/// their current at the overdrive.
#[test]
fn a_pin_that_cannot_settle_and_the_remedies_that_do() {
    let mut rows: Vec<Row> = Vec::new();
    let set = |d: &Design| d.checks.iter().find(|c| c.id == "drive_settling").map(|c| c.severity);
    // ±5 V rails, 500 kHz: the protection holds R; 0.5 µs is too short.
    let slow = design(&winch(json!([5, -5]), "500 kHz", None, "50 MHz"));
    let dd = slow.drive.clone().expect("a drive");
    rows.push(fact(
        format!("500 kHz: the settling check warns ({})", message(&slow, "drive_settling")),
        set(&slow) == Some(Severity::Warning),
        "design contract",
    ));
    let net = exported_with(&slow, "");
    let e = sampled_error("settle-slow", &slow, &net, 500e3, dd.acquisition_time);
    rows.push(fact(format!("500 kHz: ngspice's sampled error {e:.2e} V exceeds ½ LSB"), e > half_lsb(&slow), TRAN));
    let m = drive::remedies(&slow.request, &dd).expect("remedies");
    let (ts, rate) = m.acquisition;
    rows.push(row_rel(
        "the acquisition time the check names, s",
        ts,
        dd.settling_time.unwrap_or(0.0),
        1e-12,
        0.0,
        "drive rule (synth/drive.rs)",
    ));
    let hz = rangefit_engine::units::format(rate, rangefit_engine::units::Quantity::Frequency);
    rows.push(fact(format!("the check names {hz}"), message(&slow, "drive_settling").contains(&hz), "design contract"));
    // The remedy: the acquisition time that settles.
    let t_text = format!("{} ns", (ts * 1e9).ceil());
    let fixed = design(&winch(json!([5, -5]), "500 kHz", Some(&t_text), "50 MHz"));
    rows.push(fact(
        format!("acquisition {t_text}: the settling check is ok"),
        set(&fixed) == Some(Severity::Ok),
        "design contract",
    ));
    rows.push(fact(
        format!("acquisition {t_text}: no error-severity check ({:?})", errors(&fixed)),
        errors(&fixed).is_empty(),
        "design contract",
    ));
    let t_acq = fixed.drive.as_ref().expect("a drive").acquisition_time;
    let e = sampled_error("settle-longer", &fixed, &exported_with(&fixed, ""), 500e3, t_acq);
    rows.push(at_most(format!("acquisition {t_text}: ngspice's sampled error, V"), e, half_lsb(&fixed), 0.0, TRAN));
    // One 5 V rail at 200 kHz: R = 412 Ω (upward protection) misses the rule, clamps let 205 Ω do it.
    let mid = design(&winch(json!([5]), "200 kHz", None, "50 MHz"));
    let dm = mid.drive.clone().expect("a drive");
    let m = drive::remedies(&mid.request, &dm).expect("remedies at 200 kHz");
    let (r_c, i_c, t_c) = m.clamped.expect("the clamps remedy");
    rows.push(fact(
        format!("200 kHz: the check names the clamps remedy ({})", message(&mid, "drive_settling")),
        message(&mid, "drive_settling").contains("Schottky clamps"),
        "design contract",
    ));
    rows.push(at_most(
        "200 kHz, clamps: settling within the acquisition time, s",
        t_c,
        dm.acquisition_time,
        0.0,
        "drive rule (synth/drive.rs)",
    ));
    let over = dm.overdrive[0].max(dm.overdrive[1]);
    rows.push(row_rel(
        "200 kHz, clamps: the clamp's current, A",
        i_c,
        (over - CLAMP_DROP) / r_c,
        1e-9,
        0.0,
        "Ohm's law",
    ));
    let (_, reference) = drive_nodes(circuit(&mid));
    let net = exported_with(&mid, &converter_protection(2.5, true));
    let net: String = net
        .lines()
        .map(|l| if l.starts_with(&format!("{reference} ")) { replace_value(l, r_c) } else { l.to_string() })
        .collect::<Vec<_>>()
        .join("\n");
    let e = sampled_error("settle-clamped", &mid, &net, 200e3, dm.acquisition_time);
    rows.push(at_most(
        format!("200 kHz, {r_c} Ω with clamps: ngspice's sampled error, V"),
        e,
        half_lsb(&mid),
        0.0,
        TRAN,
    ));
    let (input, _) = drive_nodes(circuit(&mid));
    let alters = [vec!["alter VSENSE dc = 1".to_string()], vec!["alter VSENSE dc = -1".to_string()]];
    let ops = spice::operating_points("clamped-overdrive", &net, &alters, &[&input, "adc"]);
    for (k, what) in [(0, "up"), (1, "down")] {
        let i = (ops[k][0] - ops[k][1]).abs() / r_c;
        rows.push(at_most(
            format!("200 kHz, clamps, overload {what}: current through R, A"),
            i,
            CLAMP_CURRENT,
            1e-6,
            OP,
        ));
        rows.push(at_most(
            format!("200 kHz, clamps, overload {what}: power in R within 63 mW / 2, W"),
            i * i * r_c,
            0.063 / RATING_MARGIN,
            0.0,
            RULE,
        ));
    }
    check(&rows);
}

/// The larger bucket the check names: at 1 kHz with a 1 µs acquisition time (flagged, and
/// ngspice finds the sampled value off by more than ½ LSB), a bucket of 2^(N+1)·C_in or more
/// behind the same resistor keeps the sampled value within ½ LSB.
#[test]
fn the_larger_bucket_the_check_names_holds_the_sample() {
    let mut rows: Vec<Row> = Vec::new();
    let mut v = serde_json::to_value(winch(json!([5]), "1 kHz", Some("1 µs"), "50 MHz")).expect("request json");
    v["source"]["band_high"] = json!(20.0);
    let d = design(&Request::from_json(&v.to_string()).expect("request reads"));
    let dd = d.drive.clone().expect("a drive");
    let m = drive::remedies(&d.request, &dd).expect("remedies");
    let (cb, corner) = m.bucket.expect("the bucket remedy");
    rows.push(fact(
        format!("the check names the bucket ({})", message(&d, "drive_settling")),
        message(&d, "drive_settling").contains("bucket, whose kick"),
        "design contract",
    ));
    let bits = d.request.destination.bits;
    let c_in = d.request.destination.input_capacitance;
    rows.push(at_most(
        "the kick C_in/(C_in + C_b) of a full-scale step, LSB",
        c_in / (c_in + cb) * 2f64.powi(bits as i32),
        0.5,
        0.0,
        "charge sharing (§14)",
    ));
    rows.push(at_most(
        "ten times the band under R·C_b's corner, Hz",
        10.0 * 20.0,
        corner,
        0.0,
        "our rule (synth/drive.rs)",
    ));
    let timing = (1e3, dd.acquisition_time);
    let net = exported_with(&d, "");
    let e = sampled_error_after("bucket-small", &d, &net, timing, 2, Some(dd.acquisition_time / 200.0));
    rows.push(fact(format!("470 pF: ngspice's sampled error {e:.2e} V exceeds ½ LSB"), e > half_lsb(&d), TRAN));
    let bucket = circuit(&d).with_role(PartRole::ChargeBucket).expect("a bucket").reference.clone();
    let net: String = net
        .lines()
        .map(|l| if l.starts_with(&format!("{bucket} ")) { replace_value(l, cb) } else { l.to_string() })
        .collect::<Vec<_>>()
        .join("\n");
    let e = sampled_error_after("bucket-large", &d, &net, timing, 2, Some(dd.acquisition_time / 200.0));
    rows.push(at_most(format!("{cb:e} F: ngspice's sampled error, V"), e, half_lsb(&d), 0.0, TRAN));
    check(&rows);
}

fn replace_value(line: &str, r: f64) -> String {
    let mut w: Vec<String> = line.split_whitespace().map(str::to_string).collect();
    if w.len() >= 4 {
        w[3] = format!("{r:e}");
    }
    w.join(" ")
}

/// A loop terminal: the check states what it tolerates; ngspice with the amplifier input's
/// protection modelled finds, at that current, the shunt within half its listed rating and
/// the input's protection carrying almost nothing; at 1.5 times the current beyond the
/// upper end, the shunt is past half its rating.
#[test]
fn a_loop_terminal_states_what_it_tolerates() {
    let mut rows: Vec<Row> = Vec::new();
    let d = demo("water-tank");
    let c = circuit(&d);
    let shunt = c.with_role(PartRole::Shunt).expect("a shunt");
    let listed = listed_rating(&d, &shunt.reference);
    let v_max = fault_across(shunt.value, listed).min(d.rails.pos + CLAMP_DROP);
    let i_max = v_max / shunt.value;
    rows.push(fact(
        format!("the check names the terminal's upper current ({})", message(&d, "loop_terminal")),
        message(&d, "loop_terminal").contains(&fmt_current(i_max)),
        "design contract",
    ));
    let net = exported_with(&d, &format!("DINP sense vpos DINPUT\nDINN 0 sense DINPUT\n{INPUT_CLAMP}"));
    let alters = [vec![format!("alter ISENSE dc = {i_max:e}")], vec![format!("alter ISENSE dc = {:e}", 1.5 * i_max)]];
    let ops = spice::operating_points("loop-terminal", &net, &alters, &["sense"]);
    let p = |v: f64| v * v / shunt.value;
    rows.push(at_most("at the stated current: shunt power, W", p(ops[0][0]), listed / RATING_MARGIN, 1e-5, OP));
    rows.push(at_most(
        "at the stated current: current into the input's protection, A",
        i_max - ops[0][0] / shunt.value,
        1e-4,
        0.0,
        OP,
    ));
    rows.push(fact(
        format!("at 1.5 × the stated current the shunt takes {:.3} W", p(ops[1][0])),
        p(ops[1][0]) > listed / RATING_MARGIN,
        OP,
    ));
    rows.push(fact(format!("no error-severity check ({:?})", errors(&d)), errors(&d).is_empty(), "design contract"));
    check(&rows);
}
