pub fn calc_formulation_estimate(_input: serde_json::Value) -> Result<serde_json::Value, InputError> {
    Err(InputError::new("topic", "not written yet"))
}

