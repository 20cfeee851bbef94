//! ngspice on an exported netlist: a control block appended to the netlist, run in batch
//! mode, and the printed `name = value` lines read back. Shared by the bench-truth suite;
//! the simulator is Debian's `ngspice` (SPICE3-compatible), run through [`crate::run_ngspice`].

use crate::run_ngspice;

/// `netlist` (ending in `.end`) with `control` run in a `.control` block.
pub fn deck(netlist: &str, control: &str) -> String {
    let body = netlist.trim_end().strip_suffix(".end").unwrap_or(netlist.trim_end());
    format!("{body}\n.control\n{control}\nquit\n.endc\n.end\n")
}

/// Runs `control` on `netlist` and returns every printed `name = value` pair in order
/// (names lower-cased). Fails the test when ngspice fails.
pub fn printed(tag: &str, netlist: &str, control: &str) -> Vec<(String, f64)> {
    let d = deck(netlist, control);
    let (ok, stdout, stderr) = run_ngspice(tag, &d);
    assert!(ok, "[{tag}] ngspice failed:\n{stderr}\n{d}");
    stdout
        .lines()
        .filter_map(|l| {
            let (a, b) = l.split_once('=')?;
            let name = a.trim().to_ascii_lowercase();
            (!name.is_empty() && !name.contains(' ')).then_some(())?;
            Some((name, b.split_whitespace().next()?.parse().ok()?))
        })
        .collect()
}

/// |v(node)| from an AC analysis at each frequency (the netlist's sources set the AC drive).
pub fn ac_magnitudes(tag: &str, netlist: &str, node: &str, freqs: &[f64]) -> Vec<f64> {
    let control: String =
        freqs.iter().map(|f| format!("ac lin 1 {f:e} {f:e}\nprint vr({node}) vi({node})\n")).collect();
    let v = printed(tag, netlist, &control);
    assert_eq!(v.len(), 2 * freqs.len(), "[{tag}] ngspice printed {v:?}");
    v.chunks(2).map(|p| p[0].1.hypot(p[1].1)).collect()
}

/// Node voltages at the operating point after each list of `alter` lines.
pub fn operating_points(tag: &str, netlist: &str, alters: &[Vec<String>], nodes: &[&str]) -> Vec<Vec<f64>> {
    let mut control = String::new();
    for a in alters {
        for line in a {
            control.push_str(line);
            control.push('\n');
        }
        control.push_str("op\n");
        for n in nodes {
            control.push_str(&format!("print v({n})\n"));
        }
    }
    let v = printed(tag, netlist, &control);
    assert_eq!(v.len(), alters.len() * nodes.len(), "[{tag}] ngspice printed {v:?}");
    v.chunks(nodes.len()).map(|c| c.iter().map(|x| x.1).collect()).collect()
}

/// `netlist` with a DC source of `volts` in series with the + input of amplifier `amp`
/// (`"U1"`: its subcircuit instance `XU1`), the way an input offset sits in a real part.
pub fn with_offset(netlist: &str, amp: &str, volts: f64) -> String {
    let instance = format!("X{amp}");
    let mut out = String::new();
    for line in netlist.lines() {
        let mut words: Vec<String> = line.split_whitespace().map(str::to_string).collect();
        if words.first().is_some_and(|w| *w == instance) && words.len() > 1 {
            let plus = words[1].clone();
            out.push_str(&format!("VOS_{amp} {plus}_os {plus} DC {volts:e}\n"));
            words[1] = format!("{plus}_os");
            out.push_str(&(words.join(" ") + "\n"));
        } else {
            out.push_str(line);
            out.push('\n');
        }
    }
    out
}
