//! Diagnostics: the checks a design carries instead of failing on the first problem.
//!
//! Every stage of the pipeline appends [`Check`]s — plain sentences with a severity and a
//! stable `id` that scripts and tests can match — and goes on where it still can.

use serde::Serialize;
use std::fmt;

#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Severity {
    Ok,
    Warning,
    Error,
}

impl fmt::Display for Severity {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            Severity::Ok => "ok",
            Severity::Warning => "warning",
            Severity::Error => "error",
        })
    }
}

/// One verdict on the design: what was checked, how it came out, and what to change.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Check {
    /// Stable identifier, e.g. `headroom`, `common_mode`, `band_above_nyquist`.
    pub id: String,
    pub severity: Severity,
    pub message: String,
}

impl Check {
    pub fn new(id: &str, severity: Severity, message: impl Into<String>) -> Check {
        Check { id: id.to_string(), severity, message: message.into() }
    }
    pub fn ok(id: &str, message: impl Into<String>) -> Check {
        Check::new(id, Severity::Ok, message)
    }
    pub fn warning(id: &str, message: impl Into<String>) -> Check {
        Check::new(id, Severity::Warning, message)
    }
    pub fn error(id: &str, message: impl Into<String>) -> Check {
        Check::new(id, Severity::Error, message)
    }
}

/// Whether any check is an error.
pub fn has_error(checks: &[Check]) -> bool {
    checks.iter().any(|c| c.severity == Severity::Error)
}
