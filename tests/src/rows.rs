//! The one check helper of the data-driven tests: one [`Row`] per expectation, each naming
//! the source of its reference value (an entry of `tests/REFERENCES.md` or an independent
//! computation), and [`check`], which runs every row and fails once with a table of every
//! row outside its tolerance.
//!
//! ```
//! use rangefit_tests::rows::{check, fact, row};
//! check(&[
//!     row("RC corner, 10 kΩ and 10 nF (Hz)", 1591.549, 1591.549, 1e-3, "tests/REFERENCES.md §4.3"),
//!     fact("a fact holds", true, "common practice"),
//! ]);
//! ```

use std::fmt;

/// How a row's value must compare with its reference.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Tol {
    /// |got − want| ≤ tol (NaN fails).
    Abs(f64),
    /// |got − want| ≤ rel·|want| + abs, and got is finite.
    Rel { rel: f64, abs: f64 },
    /// got ≤ want + tol.
    AtMost(f64),
    /// got ≥ want − tol.
    AtLeast(f64),
}

impl Tol {
    /// Whether `got` passes against `want`.
    pub fn passes(self, got: f64, want: f64) -> bool {
        match self {
            Tol::Abs(t) => (got - want).abs() <= t,
            Tol::Rel { rel, abs } => (got - want).abs() <= rel * want.abs() + abs && got.is_finite(),
            Tol::AtMost(t) => got <= want + t,
            Tol::AtLeast(t) => got >= want - t,
        }
    }
}

impl fmt::Display for Tol {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match *self {
            Tol::Abs(t) => write!(f, "± {t:e}"),
            Tol::Rel { rel, abs } => write!(f, "± {rel} rel + {abs:e} abs"),
            Tol::AtMost(t) => write!(f, "at most want + {t:e}"),
            Tol::AtLeast(t) => write!(f, "at least want − {t:e}"),
        }
    }
}

/// One expectation: what is measured, the value found, the reference, how they must compare
/// and where the reference comes from.
#[derive(Clone, Debug)]
pub struct Row {
    pub what: String,
    pub got: f64,
    pub want: f64,
    pub tol: Tol,
    pub source: &'static str,
}

impl Row {
    /// Whether the row holds.
    pub fn passes(&self) -> bool {
        self.tol.passes(self.got, self.want)
    }
}

/// A row that holds when |got − want| ≤ tol.
pub fn row(what: impl Into<String>, got: f64, want: f64, tol: f64, source: &'static str) -> Row {
    Row { what: what.into(), got, want, tol: Tol::Abs(tol), source }
}

/// A row that holds when |got − want| ≤ rel·|want| + abs and got is finite.
pub fn row_rel(what: impl Into<String>, got: f64, want: f64, rel: f64, abs: f64, source: &'static str) -> Row {
    Row { what: what.into(), got, want, tol: Tol::Rel { rel, abs }, source }
}

/// A row that holds when got ≤ want + tol.
pub fn at_most(what: impl Into<String>, got: f64, want: f64, tol: f64, source: &'static str) -> Row {
    Row { what: what.into(), got, want, tol: Tol::AtMost(tol), source }
}

/// A row that holds when got ≥ want − tol.
pub fn at_least(what: impl Into<String>, got: f64, want: f64, tol: f64, source: &'static str) -> Row {
    Row { what: what.into(), got, want, tol: Tol::AtLeast(tol), source }
}

/// A yes/no fact as a row (1 = true, exactly).
pub fn fact(what: impl Into<String>, ok: bool, source: &'static str) -> Row {
    row(what, if ok { 1.0 } else { 0.0 }, 1.0, 0.0, source)
}

/// Checks every row and fails once, listing each row outside its tolerance with its source.
/// An empty table fails too: a check that ran nothing proves nothing.
pub fn check(rows: &[Row]) {
    assert!(!rows.is_empty(), "no checks ran");
    let failed: Vec<String> = rows
        .iter()
        .filter(|r| !r.passes())
        .map(|r| format!("{}: got {:e}, want {:e} ({}) [{}]", r.what, r.got, r.want, r.tol, r.source))
        .collect();
    assert!(failed.is_empty(), "{} of {} checks failed:\n{}", failed.len(), rows.len(), failed.join("\n"));
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tolerances_compare_as_documented() {
        assert!(Tol::Abs(0.1).passes(1.05, 1.0));
        assert!(!Tol::Abs(0.1).passes(1.2, 1.0));
        assert!(!Tol::Abs(f64::INFINITY).passes(f64::NAN, 1.0));
        assert!(Tol::Rel { rel: 0.05, abs: 0.0 }.passes(104.0, 100.0));
        assert!(!Tol::Rel { rel: 0.05, abs: 0.0 }.passes(106.0, 100.0));
        assert!(!Tol::Rel { rel: 0.0, abs: f64::INFINITY }.passes(f64::INFINITY, 1.0));
        assert!(Tol::AtMost(0.0).passes(1.0, 1.0) && !Tol::AtMost(0.0).passes(1.1, 1.0));
        assert!(Tol::AtLeast(0.0).passes(1.0, 1.0) && !Tol::AtLeast(0.0).passes(0.9, 1.0));
        assert_eq!(fact("x", true, "s").got, 1.0);
        assert_eq!(fact("x", false, "s").got, 0.0);
    }

    #[test]
    #[should_panic(expected = "1 of 2 checks failed")]
    fn check_lists_the_failures() {
        check(&[row("good", 1.0, 1.0, 0.0, "s"), row("bad", 2.0, 1.0, 0.5, "s")]);
    }

    #[test]
    #[should_panic(expected = "no checks ran")]
    fn an_empty_table_fails() {
        check(&[]);
    }
}
