//! Fuzzing outside CI: drives the units parser, the request decoder and the share-link
//! decoder with generated inputs (proptest strategies, a seeded runner) and counts every
//! input that panics or returns a non-finite value.
//!
//!     cargo run --release -p rangefit-tests --example fuzz -- [INPUTS] [SEED]
//!
//! INPUTS is the total (default 1,000,000), split evenly between the three targets; the
//! run prints how many inputs each target took, how many were accepted, and every failure.

use std::panic::{catch_unwind, AssertUnwindSafe};

use proptest::prelude::*;
use proptest::strategy::ValueTree;
use proptest::test_runner::{Config, RngAlgorithm, TestRng, TestRunner};
use rangefit_engine::request::Request;
use rangefit_engine::units::{self, Quantity};
use rangefit_engine::{demos, share};

const QUANTITIES: [Quantity; 6] =
    [Quantity::Voltage, Quantity::Current, Quantity::Resistance, Quantity::Frequency, Quantity::Ratio, Quantity::Time];

/// Unit-like text: numbers, prefixes, units, signs, separators and stray characters.
fn unit_text() -> impl Strategy<Value = String> {
    prop_oneof![
        any::<String>(),
        "[-+]?[0-9]{0,4}([.,][0-9]{0,4})?([eE][-+]?[0-9]{1,3})? ?[pnuµmkKMGT]?(V|A|Ω|ohm|Hz|s|F|%|ppm|dB)?",
        "[0-9]{1,3}[RkKM][0-9]{0,3}",
    ]
}

/// Request-like JSON: a demo with one field replaced by a generated value, or any text.
fn request_text() -> impl Strategy<Value = String> {
    let leaf = prop_oneof![
        any::<f64>().prop_map(|x| serde_json::json!(x)),
        any::<i64>().prop_map(|x| serde_json::json!(x)),
        unit_text().prop_map(serde_json::Value::String),
        Just(serde_json::Value::Null),
        any::<bool>().prop_map(serde_json::Value::Bool),
        Just(serde_json::json!([])),
        Just(serde_json::json!({})),
    ];
    let paths = prop_oneof![
        Just("/source/min"),
        Just("/source/max"),
        Just("/source/impedance"),
        Just("/source/band_high"),
        Just("/source/band_low"),
        Just("/destination/max"),
        Just("/destination/bits"),
        Just("/destination/sample_rate"),
        Just("/destination/reference_voltage"),
        Just("/supplies"),
        Just("/supply_tolerance"),
        Just("/parts"),
        Just("/amplifier/gbw"),
        Just("/amplifier/supply_rejection"),
        Just("/filter/order"),
        Just("/name"),
    ];
    prop_oneof![
        (0..demos::ALL.len(), paths, leaf).prop_map(|(i, path, value)| {
            let mut v: serde_json::Value = serde_json::from_str(demos::ALL[i].json).expect("demo JSON");
            if let Some((parent, key)) = path.rsplit_once('/') {
                if let Some(obj) =
                    v.pointer_mut(if parent.is_empty() { "" } else { parent }).and_then(|o| o.as_object_mut())
                {
                    obj.insert(key.to_string(), value);
                }
            }
            v.to_string()
        }),
        any::<String>(),
    ]
}

/// Link-like fragments: a demo's link with bytes changed or cut, or generated base64url.
fn link_text() -> impl Strategy<Value = String> {
    let links: Vec<String> =
        demos::ALL.iter().map(|d| share::encode(&Request::from_json(d.json).expect("demo request"))).collect();
    prop_oneof![
        (0..links.len(), any::<usize>(), any::<u8>()).prop_map(move |(i, at, b)| {
            let mut bytes = links[i].clone().into_bytes();
            let at = at % bytes.len();
            bytes[at] = b"ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789-_."[b as usize % 65];
            String::from_utf8(bytes).unwrap_or_default()
        }),
        "r[0-9]\\.[A-Za-z0-9_-]{0,200}",
        any::<String>(),
    ]
}

/// Runs `inputs` generated values through `target`; returns (accepted, failures).
fn drive<S: Strategy<Value = String>>(
    name: &str, strategy: S, inputs: usize, seed: u64, target: impl Fn(&str) -> Result<bool, String>,
) -> (usize, Vec<String>) {
    let mut seed_bytes = [0u8; 32];
    seed_bytes[..8].copy_from_slice(&seed.to_le_bytes());
    let rng = TestRng::from_seed(RngAlgorithm::ChaCha, &seed_bytes);
    let mut runner = TestRunner::new_with_rng(Config::default(), rng);
    let mut accepted = 0;
    let mut failures = Vec::new();
    for i in 0..inputs {
        let Ok(tree) = strategy.new_tree(&mut runner) else { continue };
        let text = tree.current();
        match catch_unwind(AssertUnwindSafe(|| target(&text))) {
            Ok(Ok(true)) => accepted += 1,
            Ok(Ok(false)) => {}
            Ok(Err(why)) => failures.push(format!("{name} #{i}: {why}: {text:?}")),
            Err(_) => failures.push(format!("{name} #{i}: panicked: {text:?}")),
        }
    }
    (accepted, failures)
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let total: usize = args.first().and_then(|a| a.parse().ok()).unwrap_or(1_000_000);
    let seed: u64 = args.get(1).and_then(|a| a.parse().ok()).unwrap_or(16);
    std::panic::set_hook(Box::new(|_| {}));
    let each = total.div_ceil(3);
    let units_target = |t: &str| {
        let mut ok = false;
        for q in QUANTITIES {
            if let Ok(x) = units::parse(t, q) {
                if !x.is_finite() {
                    return Err(format!("{q:?} gave {x}"));
                }
                ok = true;
            }
        }
        Ok(ok)
    };
    let request_target = |t: &str| Ok(Request::from_json(t).is_ok());
    let link_target = |t: &str| Ok(share::decode(t).is_ok());
    let mut all = Vec::new();
    for (name, accepted, failures) in [
        ("units parser", drive("units", unit_text(), each, seed, units_target)),
        ("request decoder", drive("request", request_text(), each, seed + 1, request_target)),
        ("link decoder", drive("link", link_text(), each, seed + 2, link_target)),
    ]
    .map(|(n, (a, f))| (n, a, f))
    {
        println!("{name}: {each} inputs, {accepted} accepted, {} failures", failures.len());
        all.extend(failures);
    }
    for f in all.iter().take(50) {
        println!("  {f}");
    }
    println!("total: {} inputs, {} failures", 3 * each, all.len());
    std::process::exit(if all.is_empty() { 0 } else { 1 });
}
