pub fn calc_mixture_tg(_input: serde_json::Value) -> Result<serde_json::Value, InputError> {
    Err(InputError::new("topic", "not written yet"))
}

