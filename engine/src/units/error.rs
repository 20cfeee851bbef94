//! Why a value could not be read, and the messages that say so in the user's words.

use std::fmt;

use super::{describe, examples, format, with_article, Quantity};

/// Why a value could not be read.
#[derive(Debug, Clone, PartialEq)]
pub enum UnitError {
    Empty,
    NotANumber { text: String },
    UnknownUnit { unit: String, expected: Quantity },
    WrongQuantity { unit: String, found: Quantity, expected: Quantity },
    NotFinite,
    OutOfRange { value: f64, quantity: Quantity, min: f64, max: f64 },
}

impl UnitError {
    /// The message for a field known to hold `expected`; unlike `Display`, it names the
    /// quantity for [`UnitError::Empty`] and [`UnitError::NotANumber`] too.
    pub fn message(&self, expected: Quantity) -> String {
        match self {
            UnitError::Empty => format!("value is empty; expected {}", describe(expected)),
            UnitError::NotANumber { text } => {
                format!("'{}' is not a number; expected {}", text, describe(expected))
            }
            other => other.to_string(),
        }
    }
}

impl fmt::Display for UnitError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            UnitError::Empty => write!(f, "value is empty; expected a number such as 4.7 kΩ or 100 nF"),
            UnitError::NotANumber { text } => {
                write!(f, "'{}' is not a number; write a value such as 4.7k, 4k7, 100 nF or 1e-6", text)
            }
            UnitError::UnknownUnit { unit, expected } => {
                write!(f, "unknown unit '{}'; expected {} or {}", unit, describe(*expected), examples(*expected).1)
            }
            UnitError::WrongQuantity { unit, found, expected } => {
                write!(f, "'{}' is a {} unit; expected {}", unit, found.name(), describe(*expected))
            }
            UnitError::NotFinite => {
                write!(f, "value is not a finite number (NaN, infinity or too large to represent)")
            }
            UnitError::OutOfRange { value, quantity, min, max } => write!(
                f,
                "{} is outside the plausible range for {} ({} … {})",
                format(*value, *quantity),
                with_article(*quantity),
                format(*min, *quantity),
                format(*max, *quantity)
            ),
        }
    }
}

impl std::error::Error for UnitError {}
