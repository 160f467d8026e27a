pub fn calc_cake_tg(_input: serde_json::Value) -> Result<serde_json::Value, InputError> {
    Err(InputError::new("topic", "not written yet"))
}

pub fn calc_cake_moisture_limit(_input: serde_json::Value) -> Result<serde_json::Value, InputError> {
    Err(InputError::new("topic", "not written yet"))
}

