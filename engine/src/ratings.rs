//! What a part must be built as: the standard ratings, the derating margin, and the
//! capacitor technologies with their leakage and tolerance — the rules of the trade that
//! the design step, the part list and the schematic share (each written once here).
//!
//! * **Ratings** (common practice): the smallest standard rating of at least
//!   [`RATING_MARGIN`] times the stress; resistors 63 mW at the least, capacitors 6.3 V.
//! * **What a resistor takes in a fault** ([`fault_across`]): the largest voltage across it
//!   that keeps its power within its rating over [`RATING_MARGIN`] and within the working
//!   voltage of its usual case ([`WORKING_VOLTAGES`], from memory). One rule for every fault
//!   claim: a claim goes no further than the part takes as the part list rates it (a sensor
//!   side's series resistor at the least standard rating, which every listed part meets; a
//!   loop shunt at its listed rating); the part list's rating follows a fault only where the
//!   circuit itself reaches it (the drive with the amplifier at its swing limit).
//! * **Capacitor technology** (common practice, EIA-198 dielectric classes): C0G/NP0 ceramic
//!   up to 10 nF; a capacitor that sets a filter corner (or the charge bucket) C0G/NP0 up to
//!   [`C0G_UP_TO`], film above; otherwise film in the signal path and X7R ceramic off it
//!   below [`ELECTROLYTIC_FROM`], and from there an aluminium electrolytic — unless its
//!   leakage matters where it sits (the design step measures that on the built circuit),
//!   when a class-2 multilayer ceramic takes its place up to [`CERAMIC_UP_TO`].
//! * **Electrolytic leakage** ([`electrolytic_leakage`]): the usual data-sheet limit
//!   I ≤ 0.01·C·V_R or 3 µA, whichever is larger (C in µF, V_R the rated voltage, I in µA,
//!   after a few minutes at the rated voltage) — from memory. Electrolytic tolerance ±20 %
//!   (common practice).

use serde::Serialize;

/// Standard resistor power ratings, W (common practice).
pub const POWER_RATINGS: [f64; 7] = [0.063, 0.1, 0.125, 0.25, 0.5, 1.0, 2.0];
/// Working voltage of a resistor of each [`POWER_RATINGS`] entry in its usual case, V (from
/// memory: thick-film chips 0402 50 V, 0603 75 V, 0805 150 V, 1206 … 2512 200 V; a 2 W
/// leaded metal-film part 500 V).
pub const WORKING_VOLTAGES: [f64; 7] = [50.0, 75.0, 150.0, 200.0, 200.0, 200.0, 500.0];
/// Above this a fault claim concerns high voltage (from memory: the AC limit of extra-low
/// voltage, IEC 61140), V.
pub const EXTRA_LOW_VOLTAGE: f64 = 50.0;
/// Standard capacitor voltage ratings, V (common practice).
pub const VOLTAGE_RATINGS: [f64; 12] = [6.3, 10.0, 16.0, 25.0, 35.0, 50.0, 63.0, 100.0, 250.0, 400.0, 630.0, 1000.0];
/// Rating margin: a rating at least this many times the stress.
pub const RATING_MARGIN: f64 = 2.0;
/// Capacitors from this value up are aluminium electrolytics (polarised) unless their
/// leakage matters (common practice: film and small ceramic parts stop being practical
/// around 10 µF).
pub const ELECTROLYTIC_FROM: f64 = 10e-6;
/// Largest C0G/NP0 ceramic listed for a filter or drive capacitor, F (common practice).
pub const C0G_UP_TO: f64 = 100e-9;
/// Largest class-2 multilayer ceramic (X5R/X7R) in common case sizes at 6.3–10 V, F (from
/// memory): where an electrolytic's leakage would matter, up to here a ceramic replaces it.
pub const CERAMIC_UP_TO: f64 = 100e-6;
/// Tolerance of an aluminium electrolytic (common practice).
pub const ELECTROLYTIC_TOLERANCE: f64 = 0.2;
/// The share of the converter's headroom an electrolytic's leakage may move a rest level by
/// (our rule: a tenth keeps it small beside the offsets the headroom is there for).
pub const LEAKAGE_SHARE: f64 = 0.1;

/// What a capacitor is built as.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Dielectric {
    /// Class-1 ceramic: stable, no DC-bias loss.
    C0g,
    /// Film: polyester or polypropylene (polypropylene or PPS where it sets a corner).
    Film,
    /// Class-2 multilayer ceramic (X5R/X7R): loses value under DC bias.
    Class2,
    /// Aluminium electrolytic: polarised, leaks.
    Electrolytic,
}

/// The technology a capacitor of `value` gets by its place alone: `sets_corner` for filter
/// and drive capacitors, `in_signal_path` for coupling and gain-leg capacitors.
pub fn dielectric_by_place(value: f64, sets_corner: bool, in_signal_path: bool) -> Dielectric {
    if sets_corner {
        if value <= C0G_UP_TO {
            Dielectric::C0g
        } else {
            Dielectric::Film
        }
    } else if value <= 10e-9 {
        Dielectric::C0g
    } else if value < ELECTROLYTIC_FROM {
        if in_signal_path {
            Dielectric::Film
        } else {
            Dielectric::Class2
        }
    } else {
        Dielectric::Electrolytic
    }
}

/// The leakage limit of an aluminium electrolytic of `c` farads rated `v_rated` volts, A:
/// 0.01·C·V (µF, V → µA) or 3 µA, whichever is larger (from memory).
pub fn electrolytic_leakage(c: f64, v_rated: f64) -> f64 {
    (0.01 * (c * 1e6) * v_rated * 1e-6).max(3e-6)
}

/// The smallest standard capacitor voltage rating for `stress` volts across, V (`None` above
/// the largest).
pub fn voltage_rating(stress: f64) -> Option<f64> {
    VOLTAGE_RATINGS.iter().copied().find(|&r| r >= RATING_MARGIN * stress.abs())
}

/// The smallest standard resistor power rating for `power` watts, W (`None` above the
/// largest).
pub fn power_rating(power: f64) -> Option<f64> {
    POWER_RATINGS.iter().copied().find(|&r| r >= RATING_MARGIN * power)
}

/// The largest voltage across a resistor of `r` ohms rated `rating` watts that it takes in a
/// fault: √(rating·R/[`RATING_MARGIN`]), at most its case's working voltage.
pub fn fault_across(r: f64, rating: f64) -> f64 {
    let i = POWER_RATINGS.iter().position(|&p| p >= rating).unwrap_or(POWER_RATINGS.len() - 1);
    (rating * r / RATING_MARGIN).max(0.0).sqrt().min(WORKING_VOLTAGES[i])
}
