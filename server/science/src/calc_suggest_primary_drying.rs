pub fn calc_suggest_primary_drying(_input: serde_json::Value) -> Result<serde_json::Value, InputError> {
    Err(InputError::new("topic", "not written yet"))
}

