//! (being written — stub to be replaced)

use crate::error::InputError;

pub fn calc_design_space(_input: serde_json::Value) -> Result<serde_json::Value, InputError> {
    Err(InputError::new("topic", "not written yet"))
}
