//! Tests for `rangefit_engine::values`: standard component values (IEC 60063) and
//! tolerance letters (IEC 60062). Every check names its source beside it.

use rangefit_engine::values::{
    best_divider, best_ratio, bracket, nearest, step_down, step_up, tolerance_letter, values_between, DividerChoice,
    RatioChoice, Series, Window,
};

const DEFAULT: Window = Window::RESISTOR_DEFAULT;

/// Relative closeness, for values rebuilt from significant figures.
fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-12 * a.abs().max(b.abs())
}

fn close_opt(a: Option<f64>, b: Option<f64>) -> bool {
    match (a, b) {
        (Some(a), Some(b)) => close(a, b),
        (None, None) => true,
        _ => false,
    }
}

// ---------------------------------------------------------------------------------------
// Series lists

fn check_list(series: Series, expected: &[f64], source: &str) {
    let got = series.mantissas();
    assert_eq!(got.len(), expected.len(), "{} length ({source})", series.name());
    for (i, (g, e)) in got.iter().zip(expected).enumerate() {
        assert!(close(*g, *e), "{} #{i}: got {g}, want {e} ({source})", series.name());
    }
}

#[test]
fn literal_lists() {
    let rows: &[(Series, &[f64], &str)] = &[
        (Series::E3, &[1.0, 2.2, 4.7], "IEC 60063:2015 Table 1"),
        (Series::E6, &[1.0, 1.5, 2.2, 3.3, 4.7, 6.8], "IEC 60063:2015 Table 1"),
        (Series::E12, &[1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2], "IEC 60063:2015 Table 1"),
        (
            Series::E24,
            &[
                1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2,
                6.8, 7.5, 8.2, 9.1,
            ],
            "IEC 60063:2015 Table 1",
        ),
        // Full lists from memory; they agree with round(10^(i/N), 2) as stated in
        // tests/REFERENCES.md ("E48, E96, E192 use three significant figures").
        (
            Series::E48,
            &[
                1.00, 1.05, 1.10, 1.15, 1.21, 1.27, 1.33, 1.40, 1.47, 1.54, 1.62, 1.69, 1.78, 1.87, 1.96, 2.05, 2.15,
                2.26, 2.37, 2.49, 2.61, 2.74, 2.87, 3.01, 3.16, 3.32, 3.48, 3.65, 3.83, 4.02, 4.22, 4.42, 4.64, 4.87,
                5.11, 5.36, 5.62, 5.90, 6.19, 6.49, 6.81, 7.15, 7.50, 7.87, 8.25, 8.66, 9.09, 9.53,
            ],
            "from memory (IEC 60063 E48)",
        ),
        (
            Series::E96,
            &[
                1.00, 1.02, 1.05, 1.07, 1.10, 1.13, 1.15, 1.18, 1.21, 1.24, 1.27, 1.30, 1.33, 1.37, 1.40, 1.43, 1.47,
                1.50, 1.54, 1.58, 1.62, 1.65, 1.69, 1.74, 1.78, 1.82, 1.87, 1.91, 1.96, 2.00, 2.05, 2.10, 2.15, 2.21,
                2.26, 2.32, 2.37, 2.43, 2.49, 2.55, 2.61, 2.67, 2.74, 2.80, 2.87, 2.94, 3.01, 3.09, 3.16, 3.24, 3.32,
                3.40, 3.48, 3.57, 3.65, 3.74, 3.83, 3.92, 4.02, 4.12, 4.22, 4.32, 4.42, 4.53, 4.64, 4.75, 4.87, 4.99,
                5.11, 5.23, 5.36, 5.49, 5.62, 5.76, 5.90, 6.04, 6.19, 6.34, 6.49, 6.65, 6.81, 6.98, 7.15, 7.32, 7.50,
                7.68, 7.87, 8.06, 8.25, 8.45, 8.66, 8.87, 9.09, 9.31, 9.53, 9.76,
            ],
            "from memory (IEC 60063 E96)",
        ),
    ];
    for (series, expected, source) in rows {
        check_list(*series, expected, source);
    }
}

/// Spot values of E192: (index, value, source).
fn check_spots(series: Series, rows: &[(usize, f64, &str)]) {
    let list = series.mantissas();
    for (i, want, source) in rows {
        let got = list.get(*i).copied();
        assert!(close_opt(got, Some(*want)), "{} #{i}: got {got:?}, want {want} ({source})", series.name());
    }
}

#[test]
fn e192_spot_values_and_exception() {
    check_spots(
        Series::E192,
        &[
            (0, 1.00, "IEC 60063:2015 Table 1"),
            (1, 1.01, "from memory (IEC 60063 E192)"),
            (3, 1.04, "from memory (IEC 60063 E192)"),
            (7, 1.09, "from memory (IEC 60063 E192)"),
            (15, 1.20, "from memory (IEC 60063 E192)"),
            (45, 1.72, "from memory (IEC 60063 E192)"),
            (184, 9.09, "from memory (IEC 60063 E192)"),
            // The one exception to the formula: 9.20, where round(10^(185/192), 2) = 9.19.
            (185, 9.20, "references.md: IEC 60063 E192 exception 9.20"),
            (186, 9.31, "from memory (IEC 60063 E192)"),
            (190, 9.76, "from memory (IEC 60063 E192)"),
            (191, 9.88, "from memory (IEC 60063 E192)"),
        ],
    );
    // 9.19 is not an E192 value (references.md: IEC 60063 E192 exception).
    assert!(!Series::E192.mantissas().iter().any(|m| close(*m, 9.19)));
}

/// Counts, ordering and range of every series (IEC 60063: N values per decade).
#[test]
fn counts_and_ordering() {
    let rows: &[(Series, usize, &str)] = &[
        (Series::E3, 3, "IEC 60063:2015"),
        (Series::E6, 6, "IEC 60063:2015"),
        (Series::E12, 12, "IEC 60063:2015"),
        (Series::E24, 24, "IEC 60063:2015"),
        (Series::E48, 48, "IEC 60063:2015"),
        (Series::E96, 96, "IEC 60063:2015"),
        (Series::E192, 192, "IEC 60063:2015"),
    ];
    for (series, count, source) in rows {
        let list = series.mantissas();
        assert_eq!(list.len(), *count, "{} count ({source})", series.name());
        assert_eq!(list[0], 1.0, "{} starts at 1 ({source})", series.name());
        assert!(list.windows(2).all(|w| w[0] < w[1]), "{} ascending", series.name());
        assert!(*list.last().unwrap() < 10.0, "{} below 10", series.name());
    }
}

/// E48 = every 4th E192 value, E96 = every 2nd (references.md, IEC 60063).
/// Likewise E12 = every 2nd E24, E6 = every 2nd E12, E3 = every 2nd E6 (common practice).
#[test]
fn subseries_relations() {
    let rows: &[(Series, Series, usize, &str)] = &[
        (Series::E48, Series::E192, 4, "references.md: E48 = every 4th E192"),
        (Series::E96, Series::E192, 2, "references.md: E96 = every 2nd E192"),
        (Series::E48, Series::E96, 2, "follows from the two above"),
        (Series::E12, Series::E24, 2, "common practice"),
        (Series::E6, Series::E12, 2, "common practice"),
        (Series::E3, Series::E6, 2, "common practice"),
    ];
    for (coarse, fine, step, source) in rows {
        let every: Vec<f64> = fine.mantissas().iter().step_by(*step).copied().collect();
        assert_eq!(every.len(), coarse.mantissas().len(), "{source}");
        for (a, b) in coarse.mantissas().iter().zip(&every) {
            assert!(close(*a, *b), "{} vs {}: {a} != {b} ({source})", coarse.name(), fine.name());
        }
    }
}

/// The historical values differ from round(10^(i/N), 1) at exactly the listed places
/// (references.md, IEC 60063 historical values); everywhere else the formula holds.
#[test]
fn historical_values_differ_from_formula_only_where_listed() {
    let rows: &[(Series, &[f64], &str)] = &[
        (Series::E24, &[2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2], "references.md"),
        (Series::E12, &[2.7, 3.3, 3.9, 4.7, 8.2], "references.md"),
        (Series::E6, &[3.3, 4.7], "references.md"),
        (Series::E3, &[4.7], "references.md"),
    ];
    for (series, differing, source) in rows {
        let n = series.mantissas().len() as f64;
        for (i, m) in series.mantissas().iter().enumerate() {
            let formula = (10f64.powf(i as f64 / n) * 10.0).round() / 10.0;
            let listed = differing.iter().any(|d| close(*d, *m));
            assert_eq!(!close(formula, *m), listed, "{} {m} vs formula {formula} ({source})", series.name());
        }
    }
    // E192 is the only three-figure series with an exception (references.md).
    for series in [Series::E48, Series::E96, Series::E192] {
        let n = series.mantissas().len() as f64;
        let exceptions: Vec<f64> = series
            .mantissas()
            .iter()
            .enumerate()
            .filter(|(i, m)| !close((10f64.powf(*i as f64 / n) * 100.0).round() / 100.0, **m))
            .map(|(_, m)| *m)
            .collect();
        let want: &[f64] = if series == Series::E192 { &[9.20] } else { &[] };
        assert_eq!(exceptions, want, "{} exceptions (references.md)", series.name());
    }
}

// ---------------------------------------------------------------------------------------
// Names, parsing, tolerances

#[test]
fn names_and_parse() {
    let rows: &[(&str, Option<Series>, &str)] = &[
        ("E3", Some(Series::E3), "IEC 60063 naming"),
        ("E24", Some(Series::E24), "IEC 60063 naming"),
        ("e24", Some(Series::E24), "common practice (case-insensitive)"),
        (" E96 ", Some(Series::E96), "common practice (whitespace)"),
        ("E192", Some(Series::E192), "IEC 60063 naming"),
        ("E5", None, "IEC 60063 has no E5"),
        ("24", None, "common practice (prefix required)"),
        ("", None, "common practice"),
        ("E2 4", None, "common practice"),
    ];
    for (text, want, source) in rows {
        assert_eq!(Series::parse(text), *want, "parse {text:?} ({source})");
    }
    for series in Series::ALL {
        assert_eq!(Series::parse(series.name()), Some(series), "round trip");
        assert_eq!(series.name(), format!("{series:?}"), "name matches variant");
    }
    assert_eq!(Series::ALL.len(), 7);
}

#[test]
fn nominal_tolerances() {
    let rows: &[(Series, f64, &str)] = &[
        (Series::E3, 0.4, "IEC 60063 pairs E3 with >20 %; 0.4 is this module's figure"),
        (Series::E6, 0.2, "IEC 60063:2015"),
        (Series::E12, 0.1, "IEC 60063:2015"),
        (Series::E24, 0.05, "IEC 60063:2015"),
        (Series::E48, 0.02, "IEC 60063:2015"),
        (Series::E96, 0.01, "IEC 60063:2015"),
        (Series::E192, 0.005, "IEC 60063:2015"),
    ];
    for (series, want, source) in rows {
        assert_eq!(series.nominal_tolerance(), *want, "{} ({source})", series.name());
    }
}

#[test]
fn tolerance_letters() {
    let rows: &[(f64, Option<char>, &str)] = &[
        (0.001, Some('B'), "IEC 60062:2016"),
        (0.0025, Some('C'), "IEC 60062:2016"),
        (0.005, Some('D'), "IEC 60062:2016"),
        (0.01, Some('F'), "IEC 60062:2016"),
        (0.02, Some('G'), "IEC 60062:2016"),
        (0.05, Some('J'), "IEC 60062:2016"),
        (0.1, Some('K'), "IEC 60062:2016"),
        (0.2, Some('M'), "IEC 60062:2016"),
        (0.01 * (1.0 + 1e-12), Some('F'), "rounding within 1e-9 relative"),
        (0.03, None, "IEC 60062:2016 has no 3 % letter in this set"),
        (0.0101, None, "not an exact match"),
        (0.0, None, "invalid"),
        (-0.01, None, "invalid"),
        (f64::NAN, None, "invalid"),
        (f64::INFINITY, None, "invalid"),
        (1e300, None, "invalid"),
    ];
    for (tol, want, source) in rows {
        assert_eq!(tolerance_letter(*tol), *want, "tolerance {tol} ({source})");
    }
}

// ---------------------------------------------------------------------------------------
// Nearest, bracket, steps

fn check_nearest(rows: &[(Series, f64, f64, &str)]) {
    for (series, value, want, source) in rows {
        let got = nearest(*series, *value);
        assert!(close_opt(got, Some(*want)), "{} nearest {value}: {got:?}, want {want} ({source})", series.name());
    }
}

#[test]
fn nearest_is_logarithmic_and_spans_decades() {
    check_nearest(&[
        (Series::E24, 4.5e3, 4.7e3, "references.md: log scale, 4.3k is closer linearly"),
        (Series::E12, 5.14, 5.6, "references.md: log scale, 4.7 is closer linearly"),
        (Series::E24, 4.5e-12, 4.7e-12, "same as 4.5k, other decade"),
        (Series::E24, 4.5e15, 4.7e15, "same as 4.5k, other decade"),
        (Series::E24, 9.6e3, 10e3, "log: ln(10/9.6) < ln(9.6/9.1); across a decade"),
        (Series::E6, 8e-4, 6.8e-4, "log: ln(8/6.8) < ln(10/8)"),
        (Series::E24, 4.7e3, 4.7e3, "a series value is its own nearest"),
        (Series::E24, 1.0, 1.0, "a series value is its own nearest"),
        (Series::E192, 9.19, 9.20, "references.md: E192 has 9.20, not 9.19"),
        (Series::E96, 1.0e-15, 1.0e-15, "smallest decade the brief names"),
        (Series::E3, 3.0, 2.2, "log: sqrt(2.2*4.7) = 3.22 > 3.0"),
        (Series::E3, 3.3, 4.7, "log: sqrt(2.2*4.7) = 3.22 < 3.3"),
    ]);
}

fn check_bracket(rows: &[(Series, f64, (f64, f64), &str)]) {
    for (series, value, (lo, hi), source) in rows {
        let got = bracket(*series, *value);
        let ok = matches!(got, Some((a, b)) if close(a, *lo) && close(b, *hi));
        assert!(ok, "{} bracket {value}: {got:?}, want ({lo}, {hi}) ({source})", series.name());
        assert!(close_opt(step_down(*series, *value), Some(*lo)), "step_down {value} ({source})");
        assert!(close_opt(step_up(*series, *value), Some(*hi)), "step_up {value} ({source})");
    }
}

#[test]
fn bracket_and_steps() {
    check_bracket(&[
        (Series::E24, 9.5e3, (9.1e3, 10e3), "IEC 60063 E24 list, across a decade"),
        (Series::E24, 10.5e3, (10e3, 11e3), "IEC 60063 E24 list"),
        (Series::E24, 10e3, (10e3, 10e3), "a series value brackets itself"),
        (Series::E24, 4.7e3 * (1.0 + 1e-11), (4.7e3, 4.7e3), "within 1e-9 relative"),
        (Series::E24, 4.7e3 * (1.0 - 1e-11), (4.7e3, 4.7e3), "within 1e-9 relative"),
        (Series::E24, 4.7e3 * (1.0 + 1e-6), (4.7e3, 5.1e3), "outside 1e-9 relative"),
        (Series::E3, 0.5, (0.47, 1.0), "IEC 60063 E3 list, across a decade"),
        (Series::E12, 0.95e-9, (0.82e-9, 1e-9), "IEC 60063 E12 list"),
        (Series::E12, 1.05e-9, (1e-9, 1.2e-9), "IEC 60063 E12 list"),
        (Series::E192, 9.195, (9.09, 9.20), "references.md: E192 9.20 exception"),
        (Series::E192, 9.9e6, (9.88e6, 10e6), "E192 last value 9.88, across a decade"),
        (Series::E6, 1e-15, (1e-15, 1e-15), "smallest decade the brief names"),
        (Series::E6, 7e14, (6.8e14, 1e15), "largest decade the brief names"),
    ]);
}

fn check_between(rows: &[(Series, f64, f64, usize, &str)]) {
    for (series, lo, hi, count, source) in rows {
        let got = values_between(*series, *lo, *hi);
        assert_eq!(got.len(), *count, "{} in [{lo}, {hi}] ({source})", series.name());
        assert!(got.windows(2).all(|w| w[0] < w[1]), "ascending");
        assert!(got.iter().all(|v| *v >= lo * (1.0 - 1e-9) && *v <= hi * (1.0 + 1e-9)), "inside");
    }
}

#[test]
fn values_between_counts() {
    check_between(&[
        (Series::E24, 1e3, 1e6, 73, "3 decades × 24 + 1 (IEC 60063 E24, inclusive)"),
        (Series::E12, 1.0, 10.0, 13, "12 + 1 (IEC 60063 E12, inclusive)"),
        (Series::E3, 1e-15, 1e-13, 7, "2 decades × 3 + 1"),
        (Series::E48, 1e3, 1e6, 145, "3 × 48 + 1"),
        (Series::E96, 1e3, 1e6, 289, "3 × 96 + 1"),
        (Series::E192, 1e3, 1e6, 577, "3 × 192 + 1"),
        (Series::E24, 1.05e3, 1.25e3, 2, "1.1k and 1.2k (IEC 60063 E24)"),
        (Series::E24, 9.2, 9.9, 0, "no E24 value between 9.1 and 10"),
        (Series::E24, 4.7e3, 4.7e3, 1, "single value"),
        (Series::E24, 1e6, 1e3, 0, "lo > hi"),
    ]);
    let e24: Vec<f64> = values_between(Series::E24, 8e3, 12e3);
    let want = [8.2e3, 9.1e3, 10e3, 11e3, 12e3]; // IEC 60063 E24 list
    assert_eq!(e24.len(), want.len());
    assert!(e24.iter().zip(want).all(|(a, b)| close(*a, b)), "{e24:?}");
    // Values are the doubles nearest the decimal values (exact for integers).
    assert!(values_between(Series::E24, 1e3, 1e6).contains(&4700.0));
    assert!(values_between(Series::E96, 1e3, 1e6).contains(&48700.0));
}

// ---------------------------------------------------------------------------------------
// Pair searches

/// Brute force over every pair in the window: the smallest achievable error.
fn brute_min_error(series: Series, window: Window, error: impl Fn(f64, f64) -> f64) -> f64 {
    let values = values_between(series, window.min, window.max);
    let mut best = f64::INFINITY;
    for &a in &values {
        for &b in &values {
            best = best.min(error(a, b));
        }
    }
    best
}

/// (series, wanted a/b, window, expected (a, b) or None, source)
type RatioRow<'a> = (Series, f64, Window, Option<(f64, f64)>, &'a str);

fn check_ratio(rows: &[RatioRow]) {
    for (series, ratio, window, want, source) in rows {
        let got = best_ratio(*series, *ratio, *window);
        match (got, want) {
            (None, None) => {}
            (Some(RatioChoice { a, b, ratio: r, ratio_error }), Some((wa, wb))) => {
                assert!(
                    close(a, *wa) && close(b, *wb),
                    "{} ratio {ratio}: {a}/{b}, want {wa}/{wb} ({source})",
                    series.name()
                );
                assert!(close(r, a / b), "ratio definition");
                assert!((ratio_error - (r / ratio - 1.0).abs()).abs() < 1e-15, "error definition");
                let brute = brute_min_error(*series, *window, |a, b| (a / b / ratio - 1.0).abs());
                assert!(ratio_error <= brute + 1e-12, "exhaustive: {ratio_error} vs {brute}");
            }
            _ => panic!("{} ratio {ratio}: {got:?}, want {want:?} ({source})", series.name()),
        }
    }
}

#[test]
fn best_ratio_rows() {
    let narrow = Window { min: 10e3, max: 20e3 };
    check_ratio(&[
        (Series::E24, 10.0, DEFAULT, Some((100e3, 10e3)), "common practice: gain 10 from 100k/10k, centred in window"),
        (Series::E24, 1.0, DEFAULT, Some((33e3, 33e3)), "common practice: equal values give 1"),
        (Series::E24, 1000.0, DEFAULT, Some((1e6, 1e3)), "window edges give exactly 1000"),
        (Series::E24, 2000.0, DEFAULT, None, "beyond 1M/1k: unreachable in the window"),
        (Series::E24, 1e-4, DEFAULT, None, "beyond 1k/1M: unreachable in the window"),
        (Series::E24, 1.5, narrow, Some((18e3, 12e3)), "IEC 60063 E24: 18k/12k, nearer the window centre than 15k/10k"),
    ]);
    // Every ratio found is at least as good as a brute-force search (exhaustiveness).
    for series in [Series::E12, Series::E24, Series::E96] {
        for ratio in [0.013, 0.37, 2.2, 3.7, 47.0, 123.4] {
            let got = best_ratio(series, ratio, DEFAULT).expect("reachable");
            let brute = brute_min_error(series, DEFAULT, |a, b| (a / b / ratio - 1.0).abs());
            assert!(got.ratio_error <= brute + 1e-12, "{} {ratio}: {got:?} vs {brute}", series.name());
            assert!(got.a >= 1e3 && got.a <= 1e6 && got.b >= 1e3 && got.b <= 1e6, "in window");
        }
    }
    // Exact ratios (common practice: 100k/10k etc.) really are exact.
    assert_eq!(best_ratio(Series::E24, 10.0, DEFAULT).unwrap().ratio_error, 0.0);
}

/// (series, wanted k, Thevenin preference, expected (top, bottom) or None, source)
type DividerRow<'a> = (Series, f64, Option<f64>, Option<(f64, f64)>, &'a str);

fn check_divider(rows: &[DividerRow]) {
    for (series, k, thevenin, want, source) in rows {
        let got = best_divider(*series, *k, *thevenin, DEFAULT);
        match (got, want) {
            (None, None) => {}
            (Some(DividerChoice { top, bottom, ratio, ratio_error, thevenin: th }), Some((wt, wb))) => {
                assert!(
                    close(top, *wt) && close(bottom, *wb),
                    "{} k={k} th={thevenin:?}: {top}/{bottom}, want {wt}/{wb} ({source})",
                    series.name()
                );
                assert!(close(ratio, bottom / (top + bottom)), "ratio definition");
                assert!((ratio_error - (ratio / k - 1.0).abs()).abs() < 1e-15, "error definition");
                assert!(close(th, top * bottom / (top + bottom)), "thevenin definition");
            }
            _ => panic!("{} k={k}: {got:?}, want {want:?} ({source})", series.name()),
        }
    }
}

#[test]
fn best_divider_rows() {
    check_divider(&[
        // Common practice: two equal resistors give exactly half.
        (Series::E24, 0.5, None, Some((33e3, 33e3)), "common practice: equal values halve"),
        // 0.3 = 2.4/(5.6+2.4) = 3.9/(9.1+3.9) exactly (IEC 60063 E24 values, arithmetic).
        (Series::E24, 0.3, None, Some((56e3, 24e3)), "arithmetic: 24/(56+24) = 0.3, nearest window centre"),
        (Series::E24, 0.3, Some(20e3), Some((56e3, 24e3)), "arithmetic: 56k‖24k = 16.8k, log-nearest 20k"),
        (Series::E24, 0.3, Some(250e3), Some((910e3, 390e3)), "arithmetic: 910k‖390k = 273k, log-nearest 250k"),
        (Series::E24, 0.3, Some(2e3), Some((5.6e3, 2.4e3)), "arithmetic: 5.6k‖2.4k = 1.68k, log-nearest 2k"),
        // 15k/7.5k gives 1/3 (error 1.01 %), within 1.5× the best (0.99 %), and its
        // Thevenin resistance is exactly 5k (arithmetic).
        (Series::E24, 0.33, Some(5e3), Some((15e3, 7.5e3)), "arithmetic: 15k‖7.5k = 5k"),
        (Series::E24, 0.0005, None, None, "below 1k/(1M+1k): unreachable"),
        (Series::E24, 1.0, None, None, "k must be below 1"),
        (Series::E24, 0.0, None, None, "k must be above 0"),
        (Series::E24, 0.3, Some(0.0), None, "invalid Thevenin target"),
        (Series::E24, 0.3, Some(f64::NAN), None, "invalid Thevenin target"),
    ]);
    // 0.5 gives exactly 0.5 (common practice).
    let half = best_divider(Series::E24, 0.5, None, DEFAULT).unwrap();
    assert_eq!(half.top, half.bottom);
    assert_eq!(half.ratio, 0.5);
    assert_eq!(half.ratio_error, 0.0);
}

/// Exhaustiveness and the 1.5× rule, against a brute-force search over all pairs.
#[test]
fn best_divider_matches_brute_force() {
    for series in [Series::E12, Series::E24, Series::E48] {
        let values = values_between(series, DEFAULT.min, DEFAULT.max);
        for k in [0.013, 0.1, 0.25, 0.33, 0.37, 0.6, 0.9, 0.987] {
            let error = |t: f64, b: f64| (b / (t + b) / k - 1.0).abs();
            let brute = brute_min_error(series, DEFAULT, error);
            let plain = best_divider(series, k, None, DEFAULT).expect("reachable");
            assert!(plain.ratio_error <= brute + 1e-12, "{} k={k}: {plain:?} vs {brute}", series.name());
            for r in [1.5e3, 12e3, 100e3] {
                let pick = best_divider(series, k, Some(r), DEFAULT).expect("reachable");
                let limit = (1.5 * brute).max(brute + 1e-12);
                assert!(pick.ratio_error <= limit, "{} k={k} r={r}: {pick:?}", series.name());
                // No admissible pair has a Thevenin resistance log-closer to r.
                let best_distance = values
                    .iter()
                    .flat_map(|&t| values.iter().map(move |&b| (t, b)))
                    .filter(|&(t, b)| error(t, b) <= limit)
                    .map(|(t, b)| (t * b / (t + b) / r).ln().abs())
                    .fold(f64::INFINITY, f64::min);
                let got_distance = (pick.thevenin / r).ln().abs();
                assert!(got_distance <= best_distance + 1e-12, "{} k={k} r={r}: {pick:?}", series.name());
            }
        }
    }
}

// ---------------------------------------------------------------------------------------
// Bad inputs never panic (the engine runs in WebAssembly)

#[test]
fn bad_inputs_give_none_or_empty() {
    let bad = [0.0, -1.0, -4.7e3, f64::NAN, f64::INFINITY, f64::NEG_INFINITY, 1e300, 1e-300];
    for series in Series::ALL {
        for &x in &bad {
            assert_eq!(nearest(series, x), None, "nearest {x}");
            assert_eq!(bracket(series, x), None, "bracket {x}");
            assert_eq!(step_up(series, x), None, "step_up {x}");
            assert_eq!(step_down(series, x), None, "step_down {x}");
            assert!(values_between(series, x, 1e3).is_empty(), "values_between lo {x}");
            assert!(values_between(series, 1.0, x).is_empty(), "values_between hi {x}");
            assert_eq!(best_ratio(series, x, DEFAULT), None, "best_ratio {x}");
            assert_eq!(best_divider(series, x, None, DEFAULT), None, "best_divider {x}");
            assert_eq!(best_divider(series, 0.3, Some(x), DEFAULT), None, "best_divider thevenin {x}");
            let window = Window { min: x, max: 1e6 };
            assert_eq!(best_ratio(series, 10.0, window), None, "window min {x}");
            assert_eq!(best_divider(series, 0.3, None, window), None, "window min {x}");
            let window = Window { min: 1e3, max: x };
            assert_eq!(best_ratio(series, 10.0, window), None, "window max {x}");
            assert_eq!(best_divider(series, 0.3, None, window), None, "window max {x}");
        }
        // A window holding no series value, and an inverted window.
        let empty = Window { min: 9.2e3, max: 9.9e3 };
        let inverted = Window { min: 1e6, max: 1e3 };
        for window in [empty, inverted] {
            if series == Series::E24 || window.min > window.max {
                assert_eq!(best_ratio(series, 1.0, window), None, "{window:?}");
                assert_eq!(best_divider(series, 0.5, None, window), None, "{window:?}");
            }
        }
    }
}
