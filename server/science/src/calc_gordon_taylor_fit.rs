pub fn calc_gordon_taylor_fit(_input: serde_json::Value) -> Result<serde_json::Value, InputError> {
    Err(InputError::new("topic", "not written yet"))
}

