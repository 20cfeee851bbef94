//! Bench truth: for each way a built circuit fails on the bench, ngspice on the exported
//! netlist shows the failure in a design the checks flag with an error, and shows that the
//! same job with the fault removed — a design with no error-severity check — holds up.
//! The simulator is Debian's ngspice (SPICE3-compatible; tests/REFERENCES.md §ngspice);
//! requests are scenarios of our own. ngspice must be installed: without it the test fails.

use rangefit_engine::diag::Severity;
use rangefit_engine::netlist::{netlist, NetlistConfig};
use rangefit_engine::{design, Design, Request};
use rangefit_tests::rows::{at_most, check, fact, row, row_rel, Row};
use rangefit_tests::spice;
use serde_json::{json, Value};

const NGSPICE: &str = "ngspice AC analysis of the exported netlist (tests/REFERENCES.md, ngspice)";

fn request(v: &Value) -> Request {
    Request::from_json(&v.to_string()).unwrap_or_else(|e| panic!("request does not read: {e}\n{v}"))
}

fn errors(d: &Design) -> Vec<String> {
    d.checks.iter().filter(|c| c.severity == Severity::Error).map(|c| format!("{}: {}", c.id, c.message)).collect()
}

fn exported(d: &Design) -> String {
    netlist(&d.request, d.circuit.as_ref().expect("a circuit"), NetlistConfig { testbench: false })
}

/// A quay crane's boom strain channel: 0 … 10 mV from a strain amplifier's raw output into a
/// 12-bit converter at 500 kHz, 50 kHz of band, on one 5 V rail, with the amplifier's
/// gain-bandwidth given.
fn crane(gbw: &str) -> Request {
    request(&json!({
        "version": 1, "name": "Quay crane boom strain",
        "source": {"kind": "single_ended", "min": 0, "max": 0.01, "coupling": "dc", "impedance": "100",
                   "band_high": "50 kHz"},
        "destination": {"min": 0, "max": 1.8, "bits": 12, "sample_rate": "500 kHz", "impedance": "100k"},
        "supplies": [5],
        "amplifier": {"gbw": gbw}
    }))
}

/// Response corners anywhere: an amplifier with too little gain-bandwidth for its gain puts
/// the −3 dB point inside the band. The engine must find it where ngspice finds it and
/// call it an error; with a fast amplifier the band edge stays within the allowance.
#[test]
fn a_corner_inside_the_band_is_found_and_is_an_error() {
    let mut rows: Vec<Row> = Vec::new();
    let slow = design(&crane("1 MHz"));
    let p = slow.predicted.expect("a prediction");
    let fh = p.band_high.expect("an upper corner");
    let net = exported(&slow);
    let g = spice::ac_magnitudes("crane-slow", &net, "adc", &[50.0, fh, 50e3]);
    rows.push(row(
        "slow amplifier: ngspice gain at the engine's upper corner, dB re 50 Hz",
        20.0 * (g[1] / g[0]).log10(),
        -3.0103,
        0.05,
        NGSPICE,
    ));
    rows.push(fact(format!("slow amplifier: the corner {fh:.0} Hz lies inside the 50 kHz band"), fh < 50e3, NGSPICE));
    rows.push(fact(
        format!("slow amplifier: ngspice is below −3 dB at 50 kHz ({:.2} dB)", 20.0 * (g[2] / g[0]).log10()),
        g[2] / g[0] < std::f64::consts::FRAC_1_SQRT_2,
        NGSPICE,
    ));
    let e = errors(&slow);
    rows.push(fact(
        format!("slow amplifier: the bandwidth check is an error ({e:?})"),
        e.iter().any(|m| m.starts_with("bandwidth:")),
        "design contract",
    ));

    let fast = design(&crane("50 MHz"));
    let e = errors(&fast);
    rows.push(fact(format!("fast amplifier: no error-severity check ({e:?})"), e.is_empty(), "design contract"));
    let net = exported(&fast);
    let g = spice::ac_magnitudes("crane-fast", &net, "adc", &[50.0, 50e3]);
    let allowed = fast.filter.as_ref().map_or(fast.request.filter.passband_error, |f| f.passband_allowed_db);
    rows.push(at_most(
        "fast amplifier: ngspice droop at 50 kHz, dB",
        -20.0 * (g[1] / g[0]).log10(),
        allowed,
        0.01,
        NGSPICE,
    ));
    check(&rows);
}

/// An orchard frost alarm's thermocouple amplifier: 0 … 80 mV into a 12-bit converter's
/// 0 … 3.3 V on one 3.3 V rail, the low end of the range 5 % above the lower rail.
fn orchard() -> Request {
    request(&json!({
        "version": 1, "name": "Orchard frost-alarm thermocouple",
        "source": {
            "kind": "single_ended", "min": 0, "max": "80 mV", "coupling": "dc", "impedance": 0, "band_high": "5 Hz"
        },
        "destination": {"min": 0, "max": 3.3, "bits": 12, "sample_rate": "50 Hz", "impedance": "100k"},
        "supplies": [3.3]
    }))
}

/// `netlist` with a DC source of `volts` in series with the + input of amplifier `U1`
/// (one build's input offset) and the rail `VPOS` at `rail` volts.
fn with_offset_and_rail(netlist: &str, volts: f64, rail: f64) -> String {
    let shifted = spice::with_offset(netlist, "U1", volts);
    shifted
        .lines()
        .map(|line| {
            let words: Vec<&str> = line.split_whitespace().collect();
            if words.first() == Some(&"VPOS") {
                format!("VPOS {} {} DC {rail:e}\n", words[1], words[2])
            } else {
                format!("{line}\n")
            }
        })
        .collect()
}

/// Yield that means it: builds whose amplifier offset and rail push the output into the
/// amplifier's swing limit are failures. ngspice shows such a build pinned at the limit at
/// the low end of the range; the engine counts clipped builds and the yield check fails;
/// its worst case reaches the limit too. With the rail's own tolerance, ngspice's output at
/// the two rail extremes (nominal parts) lies inside the engine's worst case.
#[test]
fn clipped_builds_are_failures_and_the_rail_is_in_the_worst_case() {
    const OP: &str = "ngspice operating point of the exported netlist (tests/REFERENCES.md, ngspice)";
    let mut rows: Vec<Row> = Vec::new();
    let req = orchard();
    let d = design(&req);
    let a = d.analysis.as_ref().expect("analyses");
    let mc = &a.tolerance.monte_carlo;
    let net = exported(&d);
    let amp = &d.amplifier;
    // Builds at the corners of the engine's box: offset at ±its figure, rail at ±5 %; at each
    // end of the range, how close ngspice's output comes to that build's swing limit.
    let mut pinned = Vec::new();
    for vos in [-amp.offset, amp.offset] {
        for rail in [3.3 * 0.95, 3.3 * 1.05] {
            let n = with_offset_and_rail(&net, vos, rail);
            let ends = [vec!["alter VSENSE dc = 0".into()], vec!["alter VSENSE dc = 0.08".into()]];
            let v = spice::operating_points("orchard-offset", &n, &ends, &["adc"]);
            let (lo, hi) = (amp.swing_low, rail - amp.swing_high);
            if v[0][0] <= lo + 2e-3 || v[1][0] >= hi - 2e-3 || v[0][0] >= hi - 2e-3 || v[1][0] <= lo + 2e-3 {
                pinned.push(format!(
                    "offset {:+.1} mV, rail {rail:.3} V: {:.4} V / {:.4} V",
                    vos * 1e3,
                    v[0][0],
                    v[1][0]
                ));
            }
        }
    }
    rows.push(fact(
        format!("ngspice: builds at the box's corners sit at a swing limit at an end of the range ({pinned:?})"),
        !pinned.is_empty(),
        OP,
    ));
    rows.push(fact(
        format!("engine: clipped builds are counted ({} of {})", mc.clipped, mc.runs),
        mc.clipped > 0,
        "design contract",
    ));
    rows.push(at_most(
        "engine: yield leaves the clipped builds out",
        mc.yield_,
        1.0 - mc.clipped as f64 / mc.runs as f64,
        1e-12,
        "design contract",
    ));
    let yield_check = d.checks.iter().find(|c| c.id == "yield").expect("a yield check");
    rows.push(fact(
        format!("engine: the yield check says the clipped builds are failures ({})", yield_check.message),
        yield_check.message.contains("count as failures"),
        "design contract",
    ));

    // The rail alone, nominal parts: ngspice at ±5 % inside the engine's worst case.
    let fast = design(&crane("50 MHz"));
    let wc = &fast.analysis.as_ref().expect("analyses").tolerance.worst_case;
    let net = exported(&fast);
    for rail in [5.0 * 0.95, 5.0 * 1.05] {
        let n = with_offset_and_rail(&net, 0.0, rail);
        let v = spice::operating_points(
            "crane-rail",
            &n,
            &[vec!["alter VSENSE dc = 0".into()], vec!["alter VSENSE dc = 0.01".into()]],
            &["adc"],
        );
        rows.push(fact(
            format!(
                "crane, rail {rail} V: ngspice {:.4} V at 0 mV inside the worst case {:.4} … {:.4} V",
                v[0][0], wc.output_at_min[0], wc.output_at_min[1]
            ),
            v[0][0] >= wc.output_at_min[0] - 1e-4 && v[0][0] <= wc.output_at_min[1] + 1e-4,
            OP,
        ));
        rows.push(fact(
            format!(
                "crane, rail {rail} V: ngspice {:.4} V at 10 mV inside the worst case {:.4} … {:.4} V",
                v[1][0], wc.output_at_max[0], wc.output_at_max[1]
            ),
            v[1][0] >= wc.output_at_max[0] - 1e-4 && v[1][0] <= wc.output_at_max[1] + 1e-4,
            OP,
        ));
    }
    check(&rows);
}

/// A harbour wall's piezo strain film: 1 GΩ of leakage behind 1 nF, ±`peak` into a 12-bit
/// converter on one 3.3 V rail.
fn harbour_film(peak: f64) -> Request {
    request(&json!({
        "version": 1, "name": "Harbour wall piezo strain film",
        "source": {"kind": "high_impedance", "min": -peak, "max": peak, "coupling": "ac", "impedance": "1G",
                   "capacitance": "1 nF", "band_low": "1 Hz", "band_high": "1 kHz"},
        "destination": {"min": 0, "max": 3.3, "bits": 12, "sample_rate": "10 kHz"},
        "supplies": [3.3]
    }))
}

/// The netlist with the sensor's EMF as a `peak` sine at 100 Hz (its return as exported, or
/// ground when `grounded`), and the transient's extremes of the follower's output and the
/// converter pin over five periods after the operating point.
fn film_extremes(tag: &str, netlist: &str, peak: f64, grounded: bool) -> [f64; 4] {
    let vsense = netlist.lines().find(|l| l.starts_with("VSENSE ")).expect("VSENSE in the netlist");
    let nodes: Vec<&str> = vsense.split_whitespace().skip(1).take(2).collect();
    let ret = if grounded { "0" } else { nodes[1] };
    let mut lines: Vec<String> = netlist.lines().map(str::to_string).collect();
    for l in lines.iter_mut().filter(|l| l.starts_with("VSENSE ")) {
        *l = format!("VSENSE {} {ret} DC 0 SIN(0 {peak} 100)", nodes[0]);
    }
    let control = "tran 20u 60m\n\
        meas tran bufmax MAX v(buf) from=10m to=60m\nmeas tran bufmin MIN v(buf) from=10m to=60m\n\
        meas tran adcmax MAX v(adc) from=10m to=60m\nmeas tran adcmin MIN v(adc) from=10m to=60m";
    let v = spice::printed(tag, &lines.join("\n"), control);
    let get = |n: &str| v.iter().find(|x| x.0 == n).unwrap_or_else(|| panic!("[{tag}] no {n} in {v:?}")).1;
    [get("bufmax"), get("bufmin"), get("adcmax"), get("adcmin")]
}

/// High-impedance sensors that are biased: on one supply a floating film returns to the
/// reference its bias resistor holds, so its own leakage cannot pull the follower's input to
/// ground. In ngspice the old wiring (sensor returned to ground, R_b to mid-rail) rests the
/// follower near ground and loses the negative half; the design as built passes the whole
/// sine to the converter as predicted. A film whose swing the follower cannot reach is an
/// error (`follower_range`), and ngspice shows it clipped.
#[test]
fn a_floating_sensor_rests_on_its_return_and_the_follower_passes_it() {
    const TRAN: &str = "ngspice transient of the exported netlist, sensor EMF a 100 Hz sine (tests/REFERENCES.md)";
    let mut rows = Vec::new();
    let d = design(&harbour_film(0.5));
    rows.push(fact(format!("±0.5 V film: no error checks ({:?})", errors(&d)), errors(&d).is_empty(), "engine"));
    let b = d.high_impedance().expect("a follower");
    rows.push(row("±0.5 V film: the input rests on the return (V)", b.input_level, 1.65, 1e-6, "half of 3.3 V"));
    let p = d.predicted.expect("predicted");
    let net = exported(&d);
    let [bmax, bmin, amax, amin] = film_extremes("film built", &net, 0.5, false);
    // 100 Hz is 570 times the low corner (0.175 Hz) and far below the filter: full swing.
    rows.push(row("built: follower peak (V)", bmax, 1.65 + 0.5, 0.01, TRAN));
    rows.push(row("built: follower trough (V)", bmin, 1.65 - 0.5, 0.01, TRAN));
    let span = 3.3;
    let (lo, hi) = (p.output_at_min.min(p.output_at_max), p.output_at_min.max(p.output_at_max));
    rows.push(row("built: converter pin peak (V)", amax, hi, 0.01 * span, TRAN));
    rows.push(row("built: converter pin trough (V)", amin, lo, 0.01 * span, TRAN));
    // The old wiring: the film's return at ground; R_b (10 × the leakage) to mid-rail.
    let [gmax, gmin, ..] = film_extremes("film grounded", &net, 0.5, true);
    println!("film built: buf {bmin:.4} … {bmax:.4} V, adc {amin:.4} … {amax:.4} V (predicted {lo:.4} … {hi:.4} V)");
    println!("film returned to ground: buf {gmin:.4} … {gmax:.4} V");
    rows.push(fact(
        format!("returned to ground: the follower's trough {gmin:.3} V sits at its swing limit, not at rest − 0.5 V"),
        gmin < 0.06 && gmax - gmin < 0.8,
        TRAN,
    ));
    // ±2 V cannot ride on 1.65 V inside 0.06 … 3.08 V: an error, and ngspice clips it.
    let wide = design(&harbour_film(2.0));
    let flagged = wide.checks.iter().any(|c| c.id == "follower_range" && c.severity == Severity::Error);
    rows.push(fact("±2 V film: follower_range is an error", flagged, "engine"));
    if let Some(c) = wide.circuit.as_ref() {
        let net = netlist(&wide.request, c, NetlistConfig { testbench: false });
        let [wmax, wmin, ..] = film_extremes("film wide", &net, 2.0, false);
        println!("±2 V film: buf {wmin:.4} … {wmax:.4} V");
        rows.push(at_most("±2 V film: follower swing clipped below 4 V peak to peak", wmax - wmin, 3.3, 0.0, TRAN));
    }
    check(&rows);
}

/// A lock gate's vibration pickup: ±10 mV, AC-coupled from `band_low` to 2 kHz, into a
/// 12-bit converter on one 3.3 V rail (gain about 150 in one stage).
fn lock_gate(band_low: &str) -> Request {
    request(&json!({
        "version": 1, "name": "Lock-gate vibration pickup",
        "source": {"kind": "single_ended", "min": -0.01, "max": 0.01, "coupling": "ac", "impedance": "600",
                   "band_low": band_low, "band_high": "2 kHz"},
        "destination": {"min": 0, "max": 3.3, "bits": 12, "sample_rate": "20 kHz"},
        "supplies": [3.3]
    }))
}

/// Operating point of `node` with `extra` lines added to the netlist.
fn op_with(tag: &str, netlist: &str, extra: &str, node: &str) -> f64 {
    let body = netlist.trim_end().strip_suffix(".end").unwrap_or(netlist).to_string();
    let v = spice::printed(tag, &format!("{body}\n{extra}\n.end\n"), &format!("op\nprint v({node})"));
    v.first().map(|x| x.1).unwrap_or_else(|| panic!("[{tag}] no v({node})"))
}

/// The circuit, its gain leg's DC block, that part's leakage as an electrolytic at its 6.3 V
/// rating (tests/REFERENCES.md §13, from memory) and the netlist line of a current source
/// carrying it across the part.
fn dc_block(d: &Design) -> (&rangefit_engine::circuit::Circuit, &rangefit_engine::circuit::Part, f64, String) {
    use rangefit_engine::circuit::{PartKind, StageRole};
    let c = d.circuit.as_ref().expect("a circuit");
    let block = c
        .parts
        .iter()
        .find(|p| p.kind == PartKind::Capacitor && p.stage == StageRole::Gain)
        .expect("the gain leg's DC block");
    let leak = rangefit_engine::ratings::electrolytic_leakage(block.value, 6.3);
    let line = format!("ILEAK {} {} DC {leak:e}", block.nodes[0], block.nodes[1]);
    (c, block, leak, line)
}

/// Capacitors that behave: an aluminium electrolytic's leakage (0.01·C·V or 3 µA, from
/// memory; tests/REFERENCES.md §13) through the gain leg's DC block flows through R_f and
/// moves the output's rest level. ngspice with that current across the part shows the shift
/// the engine states; where it is beyond a tenth of the headroom a ceramic takes the part's
/// place, and where no ceramic is large enough the design is an error — ngspice shows it
/// pinned at the swing limit. After power-up the converter pin settles within the time the
/// `settling` check states (ngspice transient from all capacitors discharged).
#[test]
fn electrolytic_leakage_and_power_up_settling() {
    use rangefit_engine::circuit::{PartRole, StageRole};
    use rangefit_engine::ratings::Dielectric;
    const OP: &str = "ngspice operating point of the exported netlist with the leakage as a current source";
    let mut rows = Vec::new();
    // 2 Hz: the DC block is 470 µF, beyond the ceramics; its 29.6 µA leakage pins the output.
    let d = design(&lock_gate("2 Hz"));
    let flagged = d.checks.iter().any(|c| c.id == "leakage" && c.severity == Severity::Error);
    rows.push(fact("2 Hz: leakage is an error", flagged, "engine"));
    let (_, block, leak, line) = dc_block(&d);
    rows.push(fact(
        "2 Hz: the DC block stays an electrolytic",
        block.dielectric == Some(Dielectric::Electrolytic),
        "engine",
    ));
    rows.push(row("2 Hz: electrolytic tolerance", block.tolerance.unwrap_or(0.0), 0.2, 1e-12, "common practice"));
    let net = exported(&d);
    let rest = op_with("leak nominal", &net, "", "adc");
    let leaky = op_with("leak 2 Hz", &net, &line, "adc");
    println!(
        "2 Hz: {} {:.0} µF leaks {:.1} µA: converter pin {rest:.4} V → {leaky:.4} V",
        block.reference,
        block.value * 1e6,
        leak * 1e6
    );
    rows.push(fact(
        format!("2 Hz: with the leakage the pin is pinned near a limit ({leaky:.3} V)"),
        !(0.1..3.2).contains(&leaky),
        OP,
    ));
    // 20 Hz: 47 µF; as an electrolytic its 3 µA would move the output by 3 µA × R_f.
    let d = design(&lock_gate("20 Hz"));
    rows.push(fact(format!("20 Hz: no error checks ({:?})", errors(&d)), errors(&d).is_empty(), "engine"));
    let (c, block, leak, line) = dc_block(&d);
    rows.push(fact("20 Hz: the DC block is a ceramic", block.dielectric == Some(Dielectric::Class2), "engine"));
    let r_f = c
        .parts
        .iter()
        .find(|p| p.stage == StageRole::Gain && p.role == Some(PartRole::FeedbackResistor))
        .map(|p| p.value)
        .expect("R_f");
    let net = exported(&d);
    let rest = op_with("leak 20 nominal", &net, "", "out1");
    let leaky = op_with("leak 20 Hz", &net, &line, "out1");
    rows.push(row_rel("20 Hz: an electrolytic's shift of the rest level (V)", leaky - rest, leak * r_f, 0.02, 0.0, OP));
    let stated = d.checks.iter().find(|c| c.id == "leakage").map(|c| c.message.clone()).unwrap_or_default();
    let shown = rangefit_engine::units::format(leaky - rest, rangefit_engine::units::Quantity::Voltage);
    println!("20 Hz: rest {rest:.4} V, with 3 µA {leaky:.4} V; engine: {stated}");
    rows.push(fact(format!("20 Hz: the leakage check states ngspice's shift {shown}"), stated.contains(&shown), OP));
    // Power-up: all capacitors discharged; the pin's last excursion beyond ½ LSB of its rest.
    let settle = d.checks.iter().find(|c| c.id == "settling").expect("a settling check");
    let stated: Vec<&str> = settle.message.split(" level in ").nth(1).unwrap_or("").split(' ').take(2).collect();
    let engine_t =
        rangefit_engine::units::parse(&stated.join(" "), rangefit_engine::units::Quantity::Time).unwrap_or(f64::NAN);
    let half = 0.5 * 3.3 / 4096.0;
    let final_v = op_with("settle op", &net, "", "adc");
    let control = format!(
        "tran {:e} {:e} uic\nmeas tran up WHEN v(adc)={:e} CROSS=LAST\nmeas tran down WHEN v(adc)={:e} CROSS=LAST",
        engine_t / 2000.0,
        3.0 * engine_t,
        final_v + half,
        final_v - half
    );
    let v = spice::printed("settle", &net, &control);
    let t = v.iter().filter(|x| x.0 == "up" || x.0 == "down").map(|x| x.1).fold(0.0f64, f64::max);
    println!("20 Hz: power-up settling ngspice {t:.3} s; engine: {}", settle.message);
    // A clamped output holds the DC block charging through the whole feedback network: the
    // time is far beyond a few τ at rest, and the engine's quasi-static charge follows it.
    rows.push(row_rel("20 Hz: power-up settling to ½ LSB (s)", engine_t, t, 0.1, 0.0, "ngspice transient, uic"));
    check(&rows);
}

/// The harbour film's low corner: its own 1 GΩ of leakage across its 1 nF and the bias
/// resistor R_b set it, whatever R_b does beyond that. The film's EMF reaches the follower
/// through (1 + j·f/f_z)/(R_s/R_par + j·f/f_z), f_z = 1/(2π·R_s·C), with its pole at the
/// engine's low corner 1/(2π·R_par·C); ngspice's AC response at the follower's output follows
/// it from well below the corner to the band. With a 1 Hz band_low that corner lies above a
/// tenth of it and the check warns.
#[test]
fn the_film_leakage_sets_the_low_corner_where_the_engine_says() {
    let mut rows: Vec<Row> = Vec::new();
    let d = design(&harbour_film(0.5));
    let b = d.high_impedance().expect("a follower");
    let (f_l, r_b) = (b.low_corner.expect("a low corner"), b.bias_resistor.expect("a bias resistor"));
    let c = d.checks.iter().find(|c| c.id == "low_corner").expect("a low_corner check");
    rows.push(fact(format!("low_corner warns: {}", c.message), c.severity == Severity::Warning, "design contract"));
    let (r_s, cap) = (1e9, 1e-9);
    let r_par = r_s * r_b / (r_s + r_b);
    rows.push(row_rel(
        "engine's corner = 1/(2π·R_par·C) (Hz)",
        f_l,
        1.0 / (2.0 * std::f64::consts::PI * r_par * cap),
        1e-9,
        0.0,
        "RC corner",
    ));
    let net = exported(&d);
    let freqs = [0.02, 0.1, f_l, 0.5, 1.0, 100.0];
    let m = spice::ac_magnitudes("film-corner", &net, "buf", &freqs);
    let f_z = f_l * r_par / r_s;
    let model = |f: f64| (1.0 + (f / f_z).powi(2)).sqrt() / ((r_s / r_par).powi(2) + (f / f_z).powi(2)).sqrt();
    for (i, &f) in freqs.iter().enumerate().take(freqs.len() - 1) {
        let got = m[i] / m[freqs.len() - 1];
        let want = model(f) / model(100.0);
        println!("{f:.4} Hz: ngspice {got:.5}, pole at the engine's corner {want:.5}");
        rows.push(row_rel(format!("response at {f:.3} Hz over 100 Hz"), got, want, 0.003, 0.0, NGSPICE));
    }
    check(&rows);
}

/// A greenhouse soil electrode (200 MΩ behind 100 pF of cable) into a 12-bit converter on
/// one 5 V rail, band to `band_high`.
fn soil_electrode(band_high: f64) -> Request {
    request(&json!({
        "version": 1, "name": "Greenhouse soil electrode",
        "source": {"kind": "high_impedance", "min": -1.0, "max": 1.0, "impedance": "200M", "capacitance": "100 pF",
                   "band_high": band_high},
        "destination": {"min": 0, "max": 3.3, "bits": 12, "sample_rate": "2 kHz"},
        "supplies": [5], "amplifier": {"bias_current": "5 pA"}
    }))
}

/// The electrode's own resistance into its cable's capacitance is a pole at 1/(2π·R·C) =
/// 7.96 Hz that no circuit after it undoes: with a 2 Hz band ngspice shows the band's top
/// 0.27 dB down, beyond the 0.1 dB allowance, and `band_flatness` is an error naming that
/// corner; with a 1 Hz band the design has no error and ngspice keeps the droop inside it.
#[test]
fn an_electrodes_own_corner_droops_the_band_and_is_named() {
    let mut rows: Vec<Row> = Vec::new();
    for (band, fails) in [(2.0, true), (1.0, false)] {
        let d = design(&soil_electrode(band));
        let m = spice::ac_magnitudes(&format!("electrode-{band}"), &exported(&d), "adc", &[band, 0.01]);
        let droop = 20.0 * (m[0] / m[1]).log10();
        let single_pole = -10.0 * (1.0 + (band / 7.958).powi(2)).log10();
        println!("band {band} Hz: ngspice {droop:+.4} dB, one pole at 7.96 Hz {single_pole:+.4} dB");
        rows.push(row_rel(format!("{band} Hz band: droop at its top (dB)"), droop, single_pole, 0.05, 0.005, NGSPICE));
        let c = d.checks.iter().find(|c| c.id == "band_flatness").expect("a band_flatness check");
        if fails {
            rows.push(fact(format!("ngspice: {droop:+.3} dB is beyond the 0.1 dB allowance"), droop < -0.1, NGSPICE));
            rows.push(fact(
                format!("band_flatness is an error naming the sensor's corner: {}", c.message),
                c.severity == Severity::Error && c.message.contains("7.96 Hz"),
                "design contract",
            ));
        } else {
            rows.push(fact(format!("no error check: {:?}", errors(&d)), errors(&d).is_empty(), "design contract"));
            rows.push(fact(format!("ngspice: {droop:+.3} dB inside the allowance"), droop > -0.1, NGSPICE));
        }
    }
    check(&rows);
}
