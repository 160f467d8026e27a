//! The one error shape that leaves the science crate: which input field is wrong and why.

use std::fmt;

/// Bad input to a calculation, naming the offending field (as it is spelled in the JSON
/// input) and the reason in words a user can act on.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct InputError {
    pub field: String,
    pub message: String,
}

impl InputError {
    pub fn new(field: impl Into<String>, message: impl Into<String>) -> Self {
        Self {
            field: field.into(),
            message: message.into(),
        }
    }

    /// The same error, with its field nested under `prefix` (e.g. `components[2].`).
    pub fn within(self, prefix: &str) -> Self {
        Self {
            field: format!("{prefix}{}", self.field),
            message: self.message,
        }
    }
}

impl fmt::Display for InputError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}: {}", self.field, self.message)
    }
}

impl std::error::Error for InputError {}

/// A finite number, or an error naming `field`.
pub fn finite(field: &str, value: f64) -> Result<f64, InputError> {
    if value.is_finite() {
        Ok(value)
    } else {
        Err(InputError::new(field, "must be a finite number"))
    }
}

/// A finite, strictly positive number, or an error naming `field`.
pub fn positive(field: &str, value: f64) -> Result<f64, InputError> {
    let v = finite(field, value)?;
    if v > 0.0 {
        Ok(v)
    } else {
        Err(InputError::new(
            field,
            format!("must be greater than zero (got {v})"),
        ))
    }
}

/// A finite, non-negative number, or an error naming `field`.
pub fn non_negative(field: &str, value: f64) -> Result<f64, InputError> {
    let v = finite(field, value)?;
    if v >= 0.0 {
        Ok(v)
    } else {
        Err(InputError::new(
            field,
            format!("must not be negative (got {v})"),
        ))
    }
}

/// A temperature in °C that is above absolute zero, returned in kelvin.
pub fn celsius_to_kelvin_checked(field: &str, temp_c: f64) -> Result<f64, InputError> {
    let c = finite(field, temp_c)?;
    let k = crate::units::c_to_k(c);
    if k > 0.0 {
        Ok(k)
    } else {
        Err(InputError::new(
            field,
            format!("{c} °C is below absolute zero (−273.15 °C)"),
        ))
    }
}
