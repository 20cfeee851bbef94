//! One presentation of a design's figures: blocks of labelled rows (label, value, unit) and
//! small tables, produced once by the part of the engine that owns the figures (each front
//! end, the filter and the converter drive) and shown as they are by the report, the app and
//! the `rangefit design` JSON. Nothing downstream formats these numbers again.
//!
//! Every number goes through [`crate::units`]: a row keeps its value in SI base units (for
//! scripts) beside the text a reader sees.

use serde::Serialize;

use crate::units::{format, format_sig, Quantity};

/// A titled block of figures, e.g. "Input follower U1".
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Block {
    /// Stable identifier (the app's test hooks and the JSON use it), e.g. `"buffer"`.
    pub id: String,
    pub title: String,
    pub rows: Vec<Row>,
    /// A table shown after the rows (a loop's states in codes, the filter's sections).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub table: Option<Table>,
}

/// One figure: what it is, its value in SI base units where it is a number, the unit of
/// that value, and the text shown (value with prefix and unit, or words).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Row {
    pub label: String,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub value: Option<f64>,
    pub unit: String,
    pub text: String,
}

/// A small table: column headings and rows of cell texts; `numeric[k]` marks a column of
/// numbers (right-aligned).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Table {
    pub header: Vec<String>,
    pub numeric: Vec<bool>,
    pub rows: Vec<Vec<String>>,
}

impl Block {
    pub fn new(id: &str, title: impl Into<String>) -> Block {
        Block { id: id.to_string(), title: title.into(), rows: Vec::new(), table: None }
    }

    /// A physical value, formatted with its prefix and unit.
    pub fn quantity(mut self, label: &str, value: f64, q: Quantity) -> Block {
        self.rows.push(Row {
            label: label.to_string(),
            value: Some(value),
            unit: unit_of(q).to_string(),
            text: format(value, q),
        });
        self
    }

    /// A range `lo … hi` of one quantity (the value is not a single number).
    pub fn range(mut self, label: &str, lo: f64, hi: f64, q: Quantity) -> Block {
        let text = format!("{} … {}", format(lo, q), format(hi, q));
        self.rows.push(Row { label: label.to_string(), value: None, unit: unit_of(q).to_string(), text });
        self
    }

    /// A level in decibels with one decimal.
    pub fn decibels(mut self, label: &str, db: Option<f64>) -> Block {
        let text = db.map_or("—".to_string(), decibel_text);
        self.rows.push(Row { label: label.to_string(), value: db, unit: "dB".to_string(), text });
        self
    }

    /// A plain ratio (V/V) with `digits` significant digits and what it is, e.g. a gain.
    pub fn ratio(mut self, label: &str, value: f64, digits: usize, remark: &str) -> Block {
        let n = format_sig(value, Quantity::Ratio, digits);
        let text = if remark.is_empty() { n } else { format!("{n} ({remark})") };
        self.rows.push(Row { label: label.to_string(), value: Some(value), unit: "V/V".to_string(), text });
        self
    }

    /// Words, no number.
    pub fn text(mut self, label: &str, text: impl Into<String>) -> Block {
        self.rows.push(Row { label: label.to_string(), value: None, unit: String::new(), text: text.into() });
        self
    }

    pub fn table(mut self, t: Table) -> Block {
        self.table = Some(t);
        self
    }
}

/// A level in dB as every figure shows it: one decimal.
pub fn decibel_text(db: f64) -> String {
    format!("{} dB", format_sig_fixed(db, 1))
}

/// `x` with `decimals` digits after the point (through the formatter's rounding, so that
/// no binary residue such as 0.06999999999999999 is ever shown).
pub fn format_sig_fixed(x: f64, decimals: usize) -> String {
    if !x.is_finite() {
        return "—".to_string();
    }
    format!("{:.*}", decimals, x)
}

/// The SI unit symbol of a quantity's values.
pub fn unit_of(q: Quantity) -> &'static str {
    q.unit_symbol()
}
