//! Field-level input errors and the small parsers that produce them.

use std::collections::BTreeMap;

use time::Date;

/// One wrong field and why.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct FieldError {
    pub field: String,
    pub message: String,
}

impl FieldError {
    pub fn new(field: impl Into<String>, message: impl Into<String>) -> Self {
        Self {
            field: field.into(),
            message: message.into(),
        }
    }
}

impl From<glasspoint_science::InputError> for FieldError {
    fn from(e: glasspoint_science::InputError) -> Self {
        FieldError::new(e.field, e.message)
    }
}

/// Every wrong field of one form, in field order, so a page can mark each of them.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct FieldErrors(BTreeMap<String, String>);

impl FieldErrors {
    pub fn add(&mut self, field: impl Into<String>, message: impl Into<String>) {
        self.0.entry(field.into()).or_insert_with(|| message.into());
    }

    pub fn push(&mut self, e: FieldError) {
        self.add(e.field, e.message);
    }

    pub fn is_empty(&self) -> bool {
        self.0.is_empty()
    }

    pub fn get(&self, field: &str) -> Option<&str> {
        self.0.get(field).map(String::as_str)
    }

    /// The message for `field`, or "" — convenient in templates.
    pub fn msg(&self, field: &str) -> &str {
        self.get(field).unwrap_or("")
    }

    pub fn has(&self, field: &str) -> bool {
        self.0.contains_key(field)
    }

    /// The first error, for the JSON API's single `{error, field}` answer.
    pub fn first(&self) -> Option<FieldError> {
        self.0
            .iter()
            .next()
            .map(|(f, m)| FieldError::new(f.clone(), m.clone()))
    }

    pub fn iter(&self) -> impl Iterator<Item = (&String, &String)> {
        self.0.iter()
    }

    /// `Ok(value)` when no error was recorded.
    pub fn into_result<T>(self, value: T) -> Result<T, FieldErrors> {
        if self.is_empty() {
            Ok(value)
        } else {
            Err(self)
        }
    }
}

impl From<FieldError> for FieldErrors {
    fn from(e: FieldError) -> Self {
        let mut all = FieldErrors::default();
        all.push(e);
        all
    }
}

/// The one set of limits every input path shares: the pages' forms and the JSON API parse
/// through the same functions, so a value one accepts the other accepts too.
pub mod limits {
    /// Names of materials, containers and cycles; analysts, pans, instruments, projects.
    pub const NAME_CHARS: usize = 120;
    /// A formulation's descriptive name.
    pub const LONG_NAME_CHARS: usize = 200;
    /// A formulation's code.
    pub const CODE_CHARS: usize = 40;
    /// One tag.
    pub const TAG_CHARS: usize = 40;
    /// Citations and other statements of where a value came from.
    pub const SOURCE_CHARS: usize = 500;
    /// Free-text notes of any record.
    pub const NOTES_CHARS: usize = 8000;
    /// Components of one formulation.
    pub const MAX_COMPONENTS: usize = 50;
}

/// A number as a form shows it: Rust's shortest text that reads back as the same `f64`, so
/// saving a form unchanged never rounds a stored value.
pub fn number_text(v: f64) -> String {
    v.to_string()
}

/// Checks a one-line text: browsers drop line breaks from single-line inputs, and control
/// characters cannot be typed, so neither may be stored.
fn check_line(errors: &mut FieldErrors, field: &str, value: &str, max: usize) {
    if value.chars().any(|c| c == '\n' || c == '\r') {
        errors.add(field, "must be a single line (no line breaks)");
    } else if value.chars().any(char::is_control) {
        errors.add(field, "must not contain control characters");
    } else if value.chars().count() > max {
        errors.add(field, format!("must be at most {max} characters"));
    }
}

/// A trimmed one-line text that must not be empty and must fit `max` characters.
pub fn required_text(errors: &mut FieldErrors, field: &str, raw: &str, max: usize) -> String {
    let value = raw.trim();
    if value.is_empty() {
        errors.add(field, "is required");
    } else {
        check_line(errors, field, value, max);
    }
    value.to_string()
}

/// A trimmed optional one-line text that must fit `max` characters.
pub fn optional_text(errors: &mut FieldErrors, field: &str, raw: &str, max: usize) -> String {
    let value = raw.trim();
    check_line(errors, field, value, max);
    value.to_string()
}

/// Free-text notes: trimmed, line breaks stored as `\n` (browsers send `\r\n` from a
/// text area, so a stored note survives a form round trip), at most
/// [`limits::NOTES_CHARS`] characters.
pub fn notes_text(errors: &mut FieldErrors, field: &str, raw: &str) -> String {
    let value = raw.replace("\r\n", "\n").replace('\r', "\n");
    let value = value.trim();
    let max = limits::NOTES_CHARS;
    if value
        .chars()
        .any(|c| c.is_control() && c != '\n' && c != '\t')
    {
        errors.add(field, "must not contain control characters");
    } else if value.chars().count() > max {
        errors.add(
            field,
            format!(
                "must be at most {max} characters (this has {})",
                value.chars().count()
            ),
        );
    }
    value.to_string()
}

/// A number typed into a form (decimal point or comma), blank meaning absent.
pub fn optional_number(errors: &mut FieldErrors, field: &str, raw: &str) -> Option<f64> {
    let text = raw.trim();
    if text.is_empty() {
        return None;
    }
    match text.replace(',', ".").parse::<f64>() {
        Ok(v) if v.is_finite() => Some(v),
        _ => {
            errors.add(field, format!("“{text}” is not a number"));
            None
        }
    }
}

/// A number that must be present.
pub fn required_number(errors: &mut FieldErrors, field: &str, raw: &str) -> Option<f64> {
    if raw.trim().is_empty() {
        errors.add(field, "is required");
        return None;
    }
    optional_number(errors, field, raw)
}

/// Checks that a present number lies in `[min, max]`, with `unit` for the message.
pub fn check_range(
    errors: &mut FieldErrors,
    field: &str,
    value: Option<f64>,
    min: f64,
    max: f64,
    unit: &str,
) {
    if let Some(v) = value {
        if !v.is_finite() {
            errors.add(field, "must be a finite number");
        } else if v < min || v > max {
            errors.add(
                field,
                format!("{v} {unit} is outside the plausible range {min} to {max} {unit}")
                    .replace("  ", " "),
            );
        }
    }
}

/// Checks that a present number is strictly positive and at most `max`.
pub fn check_positive(
    errors: &mut FieldErrors,
    field: &str,
    value: Option<f64>,
    max: f64,
    unit: &str,
) {
    if let Some(v) = value {
        if !v.is_finite() {
            errors.add(field, "must be a finite number");
        } else if v <= 0.0 {
            errors.add(field, "must be greater than zero");
        } else if v > max {
            errors.add(
                field,
                format!("must be at most {max} {unit}").replace("  ", " "),
            );
        }
    }
}

/// An ISO date (YYYY-MM-DD).
pub fn parse_date(errors: &mut FieldErrors, field: &str, raw: &str) -> Option<Date> {
    let text = raw.trim();
    if text.is_empty() {
        errors.add(field, "is required");
        return None;
    }
    let format = time::macros::format_description!("[year]-[month]-[day]");
    match Date::parse(text, &format) {
        Ok(d) => Some(d),
        Err(_) => {
            errors.add(
                field,
                format!("“{text}” is not a date; write it as YYYY-MM-DD"),
            );
            None
        }
    }
}

/// An ISO date as text.
pub fn format_date(d: Date) -> String {
    let format = time::macros::format_description!("[year]-[month]-[day]");
    d.format(&format).unwrap_or_default()
}

/// A code from a closed vocabulary.
pub fn parse_choice<T>(
    errors: &mut FieldErrors,
    field: &str,
    raw: &str,
    parse: fn(&str) -> Option<T>,
    codes: fn() -> String,
) -> Option<T> {
    let parsed = parse(raw);
    if parsed.is_none() {
        if raw.trim().is_empty() {
            errors.add(field, "is required");
        } else {
            errors.add(
                field,
                format!("“{}” is not one of: {}", raw.trim(), codes()),
            );
        }
    }
    parsed
}

/// A row id typed into a form (blank meaning none).
pub fn optional_id(errors: &mut FieldErrors, field: &str, raw: &str) -> Option<i64> {
    let text = raw.trim();
    if text.is_empty() {
        return None;
    }
    match text.parse::<i64>() {
        Ok(v) if v > 0 => Some(v),
        _ => {
            errors.add(field, "is not a valid choice");
            None
        }
    }
}
