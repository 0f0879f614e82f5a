//! Typed errors for every computation in `core`.
//!
//! Messages are lowercase, without a trailing period, and say what to change.

use serde::{Deserialize, Serialize};
use std::fmt;

/// Why a design could not be analysed, synthesised or evaluated.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum DesignError {
    /// A numeric input is NaN, infinite, or outside the range it may take.
    InvalidValue {
        /// Name of the offending field: as it appears in the design record, or as the page shows it
        /// where the design gives it a name on screen (`R1`, `supply`, `VT+ at least`; see
        /// [`crate::topology::named_on_screen`]).
        field: String,
        /// What is wrong and what range is allowed.
        reason: String,
    },
    /// The inputs are individually valid but contradict each other
    /// (for example VOH not above VOL).
    Inconsistent {
        /// What contradicts what.
        reason: String,
    },
    /// Synthesis cannot reach the targets with this topology and these rails.
    Infeasible {
        /// Why the targets cannot be met.
        reason: String,
        /// What change would make them reachable.
        suggestion: String,
    },
    /// The circuit has no hysteresis loop (or no switching at all) with these parts.
    NoSwitching {
        /// Why the circuit does not switch with two thresholds.
        reason: String,
    },
    /// An iterative solver did not converge within its iteration budget.
    NotConverged {
        /// What was being solved and how far it got.
        reason: String,
    },
    /// A parameter vector had the wrong length or named an unknown parameter.
    Parameter {
        /// What was wrong with the parameter access.
        reason: String,
    },
    /// A computed result came out NaN or infinite (the inputs, though accepted, lie where the
    /// equations overflow or divide by zero); see [`crate::finite`].
    NotFinite {
        /// Path of the first non-finite number in the result (`tolerance.worst_case.vt_upper.max.value_v`).
        quantity: String,
    },
}

impl DesignError {
    /// Shorthand for [`DesignError::InvalidValue`].
    pub fn invalid(field: &str, reason: impl Into<String>) -> Self {
        DesignError::InvalidValue { field: field.to_string(), reason: reason.into() }
    }

    /// Shorthand for [`DesignError::Inconsistent`].
    pub fn inconsistent(reason: impl Into<String>) -> Self {
        DesignError::Inconsistent { reason: reason.into() }
    }

    /// Shorthand for [`DesignError::Infeasible`].
    pub fn infeasible(reason: impl Into<String>, suggestion: impl Into<String>) -> Self {
        DesignError::Infeasible { reason: reason.into(), suggestion: suggestion.into() }
    }
}

impl fmt::Display for DesignError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            DesignError::InvalidValue { field, reason } => write!(f, "{field}: {reason}"),
            DesignError::Inconsistent { reason } => write!(f, "{reason}"),
            DesignError::Infeasible { reason, suggestion } => write!(f, "{reason}; {suggestion}"),
            DesignError::NoSwitching { reason } => write!(f, "{reason}"),
            DesignError::NotConverged { reason } => write!(f, "{reason}"),
            DesignError::Parameter { reason } => write!(f, "{reason}"),
            DesignError::NotFinite { quantity } => write!(
                f,
                "{quantity} is not a finite number: the inputs lie where this computation overflows; bring part values, currents and settings closer to ones a bench would use"
            ),
        }
    }
}

impl std::error::Error for DesignError {}

/// Checks that a value is finite.
pub fn finite(field: &str, value: f64) -> Result<f64, DesignError> {
    if value.is_finite() {
        Ok(value)
    } else {
        Err(DesignError::invalid(field, "must be a finite number"))
    }
}

/// Checks that a resistance (or any strictly positive quantity) is finite and above zero.
pub fn positive(field: &str, value: f64) -> Result<f64, DesignError> {
    if value.is_finite() && value > 0.0 {
        Ok(value)
    } else {
        Err(DesignError::invalid(field, format!("must be a finite number above zero (got {value})")))
    }
}

/// Checks that a quantity is finite and not negative.
#[inline]
pub fn non_negative(field: &str, value: f64) -> Result<f64, DesignError> {
    if value.is_finite() && value >= 0.0 {
        Ok(value)
    } else {
        Err(negative(field, value))
    }
}

#[cold]
#[inline(never)]
fn negative(field: &str, value: f64) -> DesignError {
    DesignError::invalid(field, format!("must be a finite number, zero or above (got {value})"))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn positive_rejects_zero_nan_and_infinity() {
        assert!(positive("r", 0.0).is_err());
        assert!(positive("r", f64::NAN).is_err());
        assert!(positive("r", f64::INFINITY).is_err());
        assert!(positive("r", -1.0).is_err());
        assert_eq!(positive("r", 10.0), Ok(10.0));
    }

    #[test]
    fn messages_name_the_field() {
        let e = positive("r_feedback_ohm", -1.0).unwrap_err();
        assert!(e.to_string().starts_with("r_feedback_ohm: must be"));
    }
}
