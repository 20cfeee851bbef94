//! The field table: every input of the form in page order (`FIELDS`), each with its label,
//! kind, step, group and help line, the choices of the choice fields, finding a field by its
//! request path, and the placeholder an empty field shows (what the engine uses instead).

use rangefit_engine::request::{DEFAULT_PASSBAND_ERROR_DB, DEFAULT_REFERENCE_TOLERANCE, DEFAULT_SUPPLY_TOLERANCE};
use rangefit_engine::units::{self, Quantity};

use crate::fields::{pct, q, Field, Kind, Step, AMP_GIVEN, AMP_STATE};

/// Every input of the form, in page order. Together they cover every request field.
#[rustfmt::skip]
pub const FIELDS: &[Field] = &[
    // --- the sensor -------------------------------------------------------------------
    entry("source.kind", "Kind of output", Kind::Choice(KINDS), Step::Sensor, "Its output", false,
        "How the sensor presents its signal."),
    entry("source.min", "Lowest output", q(Quantity::Voltage), Step::Sensor, "Its output", true,
        "The lowest instantaneous voltage, DC level included, e.g. 0.5 V or -2 V; for a current loop the lowest loop \
        current, e.g. 4 mA."),
    entry("source.max", "Highest output", q(Quantity::Voltage), Step::Sensor, "Its output", true,
        "The highest instantaneous voltage, DC level included, e.g. 4.5 V; for a current loop the highest loop \
        current, e.g. 20 mA."),
    entry("source.excitation", "Bridge excitation", Kind::Level, Step::Sensor, "Its output", false,
        "The voltage across the bridge, e.g. 3.3 V, or “supply” for the highest positive rail."),
    entry("source.zero_balance", "Bridge zero balance", Kind::Level, Step::Sensor, "Its output", false,
        "Its output with nothing to measure, as a share of full scale, from its datasheet, e.g. 2 % (the default)."),
    entry("source.sensitivity", "Bridge sensitivity (per volt of excitation)", Kind::Level, Step::Sensor, "Its output",
        false, "Full-scale output per volt of excitation: 2 mV/V is 0.002 or \"2 m\"."),
    entry("source.bridge_resistance", "Bridge resistance", q(Quantity::Resistance), Step::Sensor, "Its output", false,
        "Each arm's resistance, e.g. 350 Ω."),
    entry("source.active_arms", "Active arms", Kind::Whole, Step::Sensor, "Its output", false,
        "1, 2 or 4 arms change with the measurand (a load cell has 4)."),
    entry("source.ratiometric", "The converter's reference is the bridge's excitation", Kind::Flag, Step::Sensor,
        "Its output", false, "Then a drift of the excitation cancels in the reading."),
    entry("source.common_mode_min", "Lowest common-mode level", q(Quantity::Voltage), Step::Sensor, "Its output", false,
        "The pair's average level against ground at its lowest, e.g. 2.2 V."),
    entry("source.common_mode_max", "Highest common-mode level", q(Quantity::Voltage), Step::Sensor, "Its output",
        false, "The pair's average level at its highest, e.g. 2.8 V."),
    entry("source.front_end", "First amplifier", Kind::Choice(FRONT_ENDS), Step::Sensor, "Its output", false,
        "What the pair's two wires meet first: the instrumentation amplifier loads nothing and multiplies the \
        common-mode rejection by its first stage's gain."),
    entry("source.capacitance", "Sensor capacitance", q(Quantity::Capacitance), Step::Sensor, "Its output", false,
        "High impedance, DC: electrode and cable capacitance; AC: the capacitance the signal sits behind (a piezo \
        film's, e.g. 1 nF). Photodiode: its junction capacitance, e.g. 70 pF."),
    entry("source.dark_current", "Dark current", q(Quantity::Current), Step::Sensor, "Its output", false,
        "The diode's current in the dark at its bias, from its datasheet, e.g. 2 nA."),
    entry("source.burden_max", "Largest voltage the loop allows across the input", q(Quantity::Voltage), Step::Sensor,
        "Its output", false,
        "From the loop's supply and the transmitter's own drop, e.g. 5 V (a 250 Ω receiver at 20 mA)."),
    entry("source.fault_low", "Fault signalled below", q(Quantity::Current), Step::Sensor, "Its output", false,
        "NAMUR NE 43: 3.6 mA for a 4–20 mA loop."),
    entry("source.fault_high", "Fault signalled above", q(Quantity::Current), Step::Sensor, "Its output", false,
        "NAMUR NE 43: 21 mA for a 4–20 mA loop."),
    entry("source.coupling", "DC level", Kind::Choice(COUPLINGS), Step::Sensor, "Its output", false,
        "Whether the sensor's DC level is part of the measurement."),
    entry("source.impedance", "Output impedance", q(Quantity::Resistance), Step::Sensor, "Its output", false,
        "What the sensor has in series with its output; it enters the gain. 0 Ω for a stiff output; for a \
        high-impedance sensor its source resistance, e.g. 500 MΩ."),
    entry("source.band_low", "Lowest frequency of interest", q(Quantity::Frequency), Step::Sensor, "Band of interest",
        false, "Required when DC is blocked, e.g. 20 Hz. Leave empty to pass DC."),
    entry("source.band_high", "Highest frequency of interest", q(Quantity::Frequency), Step::Sensor, "Band of interest",
        false, "Leave empty for a tenth of the sample rate."),
    entry("source.measurand.name", "Quantity measured", Kind::Text, Step::Sensor, "What it measures (optional)", false,
        "e.g. pressure; used to scale converter codes back to it."),
    entry("source.measurand.unit", "Its unit", Kind::Text, Step::Sensor, "What it measures (optional)", false,
        "e.g. kPa"),
    entry("source.measurand.at_min", "Value at the lowest output", Kind::Number, Step::Sensor,
        "What it measures (optional)", false, "A plain number in that unit, e.g. 0."),
    entry("source.measurand.at_max", "Value at the highest output", Kind::Number, Step::Sensor,
        "What it measures (optional)", false, "A plain number in that unit, e.g. 600."),
    entry("name", "Design name", Kind::Text, Step::Sensor, "About this design", false,
        "Shown in your list of designs, on the schematic and in the report."),
    entry("notes", "Notes", Kind::LongText, Step::Sensor, "About this design", false,
        "Anything worth remembering: where the sensor sits, what reads the converter."),
    // --- the converter input ----------------------------------------------------------
    entry("destination.min", "Bottom of the input range", q(Quantity::Voltage), Step::Converter, "Input range", true,
        "The converter's lowest input voltage, e.g. 0 V."),
    entry("destination.max", "Top of the input range", q(Quantity::Voltage), Step::Converter, "Input range", true,
        "The converter's highest input voltage (often its reference), e.g. 3.3 V."),
    entry("destination.headroom", "Margin kept free at each end", pct(), Step::Converter, "Input range", false,
        "Share of the span left unused at each end to absorb tolerances, e.g. 5 %."),
    entry("destination.bits", "Resolution (bits)", Kind::Whole, Step::Converter, "Sampling", false,
        "A whole number from 1 to 32."),
    entry("destination.sample_rate", "Sample rate", q(Quantity::Frequency), Step::Converter, "Sampling", true,
        "Samples per second, e.g. 48 kHz."),
    entry("destination.impedance", "Input impedance", q(Quantity::Resistance), Step::Converter, "Sampling", false,
        "What the converter input loads the circuit with, e.g. 10 kΩ."),
    entry("destination.converter", "Kind of converter", Kind::Choice(CONVERTERS), Step::Converter, "Sampling", false,
        "Decides which frequency folds into the band and whether the pin needs a charge reservoir."),
    entry("destination.modulator_rate", "Modulator rate", q(Quantity::Frequency), Step::Converter, "Sampling", false,
        "The rate the oversampling modulator samples at, e.g. 3.072 MHz; at least twice the sample rate."),
    entry("destination.acquisition_time", "Acquisition time", q(Quantity::Time), Step::Converter, "Sampling", false,
        "How long the pin is connected to the sampling capacitor, from the converter's datasheet."),
    entry("destination.input_capacitance", "Sampling capacitance", q(Quantity::Capacitance), Step::Converter,
        "Sampling", false, "The converter's sampling capacitor, from its datasheet, e.g. 20 pF."),
    entry("destination.injection_limit", "Largest fault current into the pin", q(Quantity::Current), Step::Converter,
        "Sampling", false,
        "What the pin's protection may carry in a fault, from the converter's datasheet, e.g. 5 mA."),
    entry("destination.ratiometric", "The converter's reference is the positive supply rail", Kind::Flag,
        Step::Converter, "Reference", false, "Then its readings follow that rail: a level taken as a share of it \
        cancels, but the rail's tolerance scales every reading."),
    entry("destination.reference_voltage", "Reference voltage", q(Quantity::Voltage), Step::Converter, "Reference",
        false, "The voltage the converter's span is made from, e.g. 2.5 V."),
    entry("destination.reference_tolerance", "Reference tolerance", pct(), Step::Converter, "Reference", false,
        "Its initial accuracy, from its datasheet, e.g. 0.1 %."),
    entry("destination.reference_pin", "The reference is brought out as a pin the circuit may use", Kind::Flag,
        Step::Converter, "Reference", false, "Then level shifts are taken from it instead of from a rail."),
    entry("filter.response", "Filter response", Kind::Choice(RESPONSES), Step::Converter, "Anti-alias filter", false,
        "The shape of the low-pass ahead of the converter."),
    entry("filter.topology", "Sections built as", Kind::Choice(TOPOLOGIES), Step::Converter, "Anti-alias filter", false,
        "How each second-order section is built."),
    entry("filter.order", "Order", Kind::Whole, Step::Converter, "Anti-alias filter", false,
        "Leave empty for the lowest order that meets the rejection."),
    entry("filter.max_order", "Highest order allowed", Kind::Whole, Step::Converter, "Anti-alias filter", false,
        "Beyond 8, part tolerances spoil the response; a faster or oversampling converter is the better answer."),
    entry("filter.passband_error", "In-band error allowed at the band's top", Kind::Level, Step::Converter,
        "Anti-alias filter", false, "In dB, e.g. 0.1 dB."),
    entry("filter.out_of_band_level", "Strongest content above the band", Kind::Level, Step::Converter,
        "Anti-alias filter", false,
        "Relative to full scale: -40 dB, 1 % or 0.01. Full scale (0 dB) is the safe assumption."),
    entry("keep_polarity", "The output rises when the sensor's signal rises", Kind::Flag, Step::Converter, "Direction",
        false, "Untick to let Rangefit use an inverting stage when that is simpler."),
    // --- power and parts --------------------------------------------------------------
    entry("supplies", "Supply rails", Kind::Rails, Step::Parts, "Power", true,
        "Every rail you can use, separated by commas: “3.3” for one rail, “5, 3.3” for two, “12, -12” for a split \
        supply. Ground is always there."),
    entry("supply_tolerance", "Rail tolerance", Kind::Level, Step::Parts, "Power", false,
        "How far each rail may stray from its nominal value, e.g. 5 % (one figure for every rail)."),
    entry("parts.resistor_series", "Resistor series", Kind::Choice(SERIES), Step::Parts, "Resistors", false,
        "The IEC 60063 series you stock."),
    entry("parts.resistor_tolerance", "Resistor tolerance", pct(), Step::Parts, "Resistors", false,
        "e.g. 1 % or 0.1 %."),
    entry("parts.resistor_min", "Smallest resistor", q(Quantity::Resistance), Step::Parts, "Resistors", false,
        "Below this, currents and loading grow."),
    entry("parts.resistor_max", "Largest resistor", q(Quantity::Resistance), Step::Parts, "Resistors", false,
        "Above this, noise and leakage grow; at least ten times the smallest."),
    entry("parts.capacitor_series", "Capacitor series", Kind::Choice(SERIES), Step::Parts, "Capacitors", false,
        "The IEC 60063 series you stock."),
    entry("parts.capacitor_tolerance", "Capacitor tolerance", pct(), Step::Parts, "Capacitors", false, "e.g. 10 %."),
    entry("amplifier", "Amplifier", Kind::Choice(AMP_MODES), Step::Parts, "Amplifier", false,
        "Either way the design lists what the amplifier must provide."),
    entry("amplifier.gbw", "Gain-bandwidth (GBW)", q(Quantity::Frequency), Step::Parts, "Amplifier", false, ""),
    entry("amplifier.slew_rate", "Slew rate", q(Quantity::SlewRate), Step::Parts, "Amplifier", false, ""),
    entry("amplifier.swing_low", "Output reaches the lower rail within", q(Quantity::Voltage), Step::Parts, "Amplifier",
        false, ""),
    entry("amplifier.swing_high", "Output reaches the upper rail within", q(Quantity::Voltage), Step::Parts,
        "Amplifier", false, ""),
    entry("amplifier.cm_low", "Input range from the lower rail", q(Quantity::Voltage), Step::Parts, "Amplifier", false,
        "Negative: beyond the rail."),
    entry("amplifier.cm_high", "Input range from the upper rail", q(Quantity::Voltage), Step::Parts, "Amplifier", false,
        "Negative: beyond the rail."),
    entry("amplifier.supply_min", "Lowest supply", q(Quantity::Voltage), Step::Parts, "Amplifier", false, ""),
    entry("amplifier.supply_max", "Highest supply", q(Quantity::Voltage), Step::Parts, "Amplifier", false, ""),
    entry("amplifier.offset", "Input offset voltage", q(Quantity::Voltage), Step::Parts, "Amplifier", false, ""),
    entry("amplifier.bias_current", "Input bias current", q(Quantity::Current), Step::Parts, "Amplifier", false, ""),
    entry("amplifier.noise_voltage", "Voltage noise density", q(Quantity::VoltageNoise), Step::Parts, "Amplifier",
        false, ""),
    entry("amplifier.noise_current", "Current noise density", q(Quantity::CurrentNoise), Step::Parts, "Amplifier",
        false, ""),
    entry("amplifier.noise_corner", "1/f noise corner", q(Quantity::Frequency), Step::Parts, "Amplifier", false, ""),
    entry("amplifier.supply_rejection", "Supply rejection", Kind::Level, Step::Parts, "Amplifier", false,
        "Offset change per volt of supply: 80 dB or 1e-4."),
    entry("amplifier.open_loop_gain", "Open-loop gain (V/V)", q(Quantity::Ratio), Step::Parts, "Amplifier", false, ""),
    entry("analysis.temperature", "Temperature", q(Quantity::Temperature), Step::Parts, "Analyses", false,
        "For thermal noise, e.g. 300 K or 27 °C."),
    entry("analysis.monte_carlo_runs", "Monte Carlo builds", Kind::Whole, Step::Parts, "Analyses", false,
        "Random builds within the tolerances; 0 skips the spread."),
    entry("analysis.seed", "Monte Carlo seed", Kind::Whole, Step::Parts, "Analyses", false,
        "The same seed gives the same builds."),
];

/// The field with request path `path`.
pub fn field(path: &str) -> Option<&'static Field> {
    FIELDS.iter().find(|f| f.path == path)
}

/// Index of the field with request path `path` in [`FIELDS`].
pub fn index(path: &str) -> Option<usize> {
    FIELDS.iter().position(|f| f.path == path)
}

/// Placeholder of an optional field left empty: what the engine will use instead.
pub fn placeholder(f: &Field, design: Option<&rangefit_engine::Design>) -> String {
    let from_design = |v: Option<f64>| v.map(|x| units::format(x, f.quantity().unwrap_or(Quantity::Ratio)));
    let amp = design.map(|d| &d.amplifier);
    let assumed = |x: Option<f64>| {
        from_design(x).map(|t| format!("assumed: {t}")).unwrap_or_else(|| "assumed from a generic class".into())
    };
    match f.path {
        "source.band_low" => "empty: from DC".into(),
        "source.band_high" => from_design(design.map(|d| d.request.source.band_high))
            .map(|t| format!("empty: a tenth of the sample rate ({t})"))
            .unwrap_or_else(|| "empty: a tenth of the sample rate".into()),
        "name" => "Untitled design".into(),
        "destination.modulator_rate" => "needed for an oversampling converter".into(),
        "source.burden_max" => "empty: 5 V".into(),
        "source.fault_low" | "source.fault_high" => {
            let spec = design.and_then(|d| d.request.source.current_loop.as_ref());
            let v = spec.map(|s| if f.path == "source.fault_low" { s.fault_low } else { s.fault_high });
            v.map(|x| format!("empty: {}", units::format(x, Quantity::Current)))
                .unwrap_or_else(|| "empty: NAMUR NE 43 limits".into())
        }
        "destination.acquisition_time" => {
            let t = design.map(|d| units::format(d.request.destination.acquisition_time, Quantity::Time));
            t.map(|t| format!("empty: a quarter of the sample period ({t})"))
                .unwrap_or_else(|| "empty: a quarter of the sample period".into())
        }
        "filter.order" => match design.and_then(|d| d.filter.as_ref()) {
            Some(f) => format!("empty: the lowest that meets the rejection ({})", f.order),
            None => "empty: the lowest that meets the rejection".into(),
        },
        "filter.passband_error" => format!("empty: {} dB (steep: its 0.5 dB ripple)", DEFAULT_PASSBAND_ERROR_DB),
        "filter.out_of_band_level" => "empty: full scale (0 dB)".into(),
        "amplifier.gbw" => assumed(amp.map(|a| a.gbw)),
        "amplifier.slew_rate" => assumed(amp.map(|a| a.slew_rate)),
        "amplifier.swing_low" => assumed(amp.map(|a| a.swing_low)),
        "amplifier.swing_high" => assumed(amp.map(|a| a.swing_high)),
        "amplifier.cm_low" => assumed(amp.map(|a| a.cm_low)),
        "amplifier.cm_high" => assumed(amp.map(|a| a.cm_high)),
        "amplifier.supply_min" => assumed(amp.map(|a| a.supply_min)),
        "amplifier.supply_max" => assumed(amp.map(|a| a.supply_max)),
        "amplifier.offset" => assumed(amp.map(|a| a.offset)),
        "amplifier.bias_current" => assumed(amp.map(|a| a.bias_current)),
        "amplifier.noise_voltage" => assumed(amp.map(|a| a.noise_voltage)),
        "amplifier.noise_current" => assumed(amp.map(|a| a.noise_current)),
        "amplifier.noise_corner" => assumed(amp.map(|a| a.noise_corner)),
        "amplifier.open_loop_gain" => assumed(amp.map(|a| a.open_loop_gain)),
        "amplifier.supply_rejection" => assumed(amp.map(|a| a.supply_rejection)),
        "destination.reference_voltage" => "empty: top of the range".into(),
        "destination.reference_tolerance" => format!("empty: {}", units::format_percent(DEFAULT_REFERENCE_TOLERANCE)),
        "supply_tolerance" => format!("empty: {}", units::format_percent(DEFAULT_SUPPLY_TOLERANCE)),
        _ => match f.kind {
            Kind::Quantity { q, .. } => {
                let (a, b) = match q {
                    Quantity::Voltage => ("e.g. 3.3 V", "e.g. 250 mV"),
                    Quantity::Frequency => ("e.g. 48 kHz", "e.g. 10 Hz"),
                    Quantity::Resistance => ("e.g. 4.7k or 4k7", "e.g. 10 kΩ"),
                    _ => ("", ""),
                };
                if f.required {
                    a.into()
                } else {
                    b.into()
                }
            }
            _ => String::new(),
        },
    }
}

const KINDS: &[(&str, &str)] = &[
    ("single_ended", "Single-ended voltage (one signal wire against ground)"),
    ("differential", "Differential pair (two signal wires riding on a common-mode level)"),
    ("bridge", "Resistive bridge (load cell, strain gauge, pressure die) on its excitation"),
    ("current_loop", "Current loop (4–20 mA or another range), measured across a shunt"),
    ("high_impedance", "High-impedance voltage (MΩ to TΩ: pH or ion electrode, piezo film, bare electret)"),
    ("photodiode", "Photodiode: its photocurrent, into a transimpedance stage"),
];
const FRONT_ENDS: &[(&str, &str)] = &[
    ("auto", "Let Rangefit choose (instrumentation amplifier for a bridge, a gain above 10 or high-impedance legs)"),
    ("difference", "Difference amplifier: one amplifier, the legs see its input resistors"),
    ("instrumentation", "Instrumentation amplifier: two input amplifiers, the legs see only their inputs"),
];
const COUPLINGS: &[(&str, &str)] = &[
    ("dc", "Pass DC: the lowest output maps to the bottom of the converter range, the highest to the top"),
    ("ac", "Block DC: only the swing passes, centred in the converter range"),
];
const CONVERTERS: &[(&str, &str)] = &[
    ("unknown", "Not known (treated as sampling)"),
    ("sar", "Sampling (SAR): the pin charges a sampling capacitor"),
    ("oversampling", "Oversampling (delta-sigma) with its own decimation filter"),
];
const RESPONSES: &[(&str, &str)] = &[
    ("flat", "Flat passband (Butterworth)"),
    ("linear_phase", "Keeps pulse shapes: linear phase (Bessel)"),
    ("steep", "Steepest roll-off, 0.5 dB ripple (Chebyshev)"),
    ("none", "No filter"),
];
const TOPOLOGIES: &[(&str, &str)] = &[
    ("sallen_key", "Sallen-Key (non-inverting, unity gain)"),
    ("multiple_feedback", "Multiple feedback (inverting, around a reference)"),
];
const SERIES: &[(&str, &str)] =
    &[("E3", "E3"), ("E6", "E6"), ("E12", "E12"), ("E24", "E24"), ("E48", "E48"), ("E96", "E96"), ("E192", "E192")];
const AMP_MODES: &[(&str, &str)] = &[
    (AMP_STATE, "Let Rangefit state the requirements (a generic amplifier is assumed)"),
    (AMP_GIVEN, "I know figures of my amplifier"),
];

/// One row of [`FIELDS`].
const fn entry(
    path: &'static str, label: &'static str, kind: Kind, step: Step, group: &'static str, required: bool,
    help: &'static str,
) -> Field {
    Field { path, label, kind, step, group, required, help }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rangefit_engine::{demos, Request};
    use serde_json::Value;

    fn demo_json(i: usize) -> Value {
        serde_json::from_str(demos::ALL[i].json).expect("demo is JSON")
    }

    #[test]
    fn every_request_field_has_an_input() {
        // The normalised request of a demo with every optional part present, flattened to
        // leaf paths, must be covered by FIELDS (arrays count as one field).
        let mut json = demo_json(0);
        json["amplifier"] = serde_json::json!({"gbw": 1e6});
        json["source"]["measurand"] = serde_json::json!({"name": "depth", "unit": "m", "at_min": 0, "at_max": 10});
        let req = Request::from_value(&json).expect("valid");
        let norm = serde_json::to_value(&req).expect("serialise");
        fn leaves(v: &Value, prefix: &str, out: &mut Vec<String>) {
            match v {
                Value::Object(m) => {
                    for (k, x) in m {
                        let p = if prefix.is_empty() { k.clone() } else { format!("{prefix}.{k}") };
                        leaves(x, &p, out);
                    }
                }
                _ => out.push(prefix.to_string()),
            }
        }
        let mut paths = Vec::new();
        leaves(&norm, "", &mut paths);
        for p in paths {
            if p == "version" {
                continue;
            }
            assert!(field(&p).is_some(), "no input for request field {p}");
        }
        for name in rangefit_engine::request::AMPLIFIER_FIGURES {
            assert!(field(&format!("amplifier.{name}")).is_some(), "no input for amplifier.{name}");
        }
    }
}
