//! One JSON shape per calculation topic, shared by the HTTP API (`POST /api/v1/calc/TOPIC`)
//! and the command line (`glasspoint calc TOPIC`).

use serde::de::DeserializeOwned;
use serde::Serialize;
use serde_json::Value;

use crate::error::InputError;

/// Every topic this crate answers on its own. (`formulation-estimate` with a
/// `formulation_id` is resolved against the database by the application first.)
pub const TOPICS: &[&str] = &[
    "ice-vapor-pressure",
    "mixture-tg",
    "cake-tg",
    "cake-moisture-limit",
    "product-limit",
    "formulation-estimate",
    "annealing-advice",
    "gordon-taylor-fit",
    "primary-drying",
    "design-space",
    "suggest-primary-drying",
    "cycle-check",
    "dsc-analysis",
    "kv-from-gravimetric",
    "kv-fit",
    "rp-from-product-temperature",
    "secondary-drying-kinetics",
    "end-of-primary-drying",
];

#[derive(Debug, Clone, PartialEq, Eq)]
pub enum CalcError {
    UnknownTopic(String),
    Input(InputError),
}

impl From<InputError> for CalcError {
    fn from(e: InputError) -> Self {
        CalcError::Input(e)
    }
}

/// Run `topic` on a JSON input and answer its JSON result.
pub fn run(topic: &str, input: Value) -> Result<Value, CalcError> {
    let out = match topic {
        "ice-vapor-pressure" => crate::ice::calc_ice_vapor_pressure(input),
        "mixture-tg" => crate::mixture::calc_mixture_tg(input),
        "cake-tg" => crate::cake::calc_cake_tg(input),
        "cake-moisture-limit" => crate::cake::calc_cake_moisture_limit(input),
        "product-limit" => crate::limit::calc_product_limit(input),
        "formulation-estimate" => crate::composition::calc_formulation_estimate(input),
        "annealing-advice" => crate::annealing::calc_annealing_advice(input),
        "gordon-taylor-fit" => crate::fit::calc_gordon_taylor_fit(input),
        "primary-drying" => crate::drying::calc_primary_drying(input),
        "design-space" => crate::design_space::calc_design_space(input),
        "suggest-primary-drying" => crate::suggest::calc_suggest_primary_drying(input),
        "cycle-check" => crate::verdict::calc_cycle_check(input),
        "dsc-analysis" => crate::dsc::calc_dsc_analysis(input),
        "kv-from-gravimetric" => crate::runs::topic::calc_kv_from_gravimetric(input),
        "kv-fit" => crate::runs::topic::calc_kv_fit(input),
        "rp-from-product-temperature" => {
            crate::runs::topic::calc_rp_from_product_temperature(input)
        }
        "secondary-drying-kinetics" => crate::runs::topic::calc_secondary_drying_kinetics(input),
        "end-of-primary-drying" => crate::runs::topic::calc_end_of_primary_drying(input),
        other => return Err(CalcError::UnknownTopic(other.to_string())),
    };
    Ok(out?)
}

/// Deserialize a topic's input, turning serde's complaint into an error naming the field
/// (its JSON path, e.g. `components[1].mass_fraction`).
pub fn parse_input<T: DeserializeOwned>(input: Value) -> Result<T, InputError> {
    serde_path_to_error::deserialize(input).map_err(|err| {
        let path = err.path().to_string();
        let inner = err.into_inner().to_string();
        // serde reports a missing field at its parent's path; name the field itself.
        let missing = inner
            .strip_prefix("missing field `")
            .and_then(|rest| rest.split('`').next())
            .map(str::to_string);
        let field = match (missing, path.as_str()) {
            (Some(name), "." | "") => name,
            (Some(name), parent) => format!("{parent}.{name}"),
            (None, "." | "") => "input".to_string(),
            (None, p) => p.to_string(),
        };
        let message = inner
            .split(" at line ")
            .next()
            .unwrap_or(&inner)
            .to_string();
        InputError::new(field, message)
    })
}

/// Serialize a topic's result.
pub fn to_output<T: Serialize>(value: &T) -> Result<Value, InputError> {
    serde_json::to_value(value)
        .map_err(|e| InputError::new("output", format!("result could not be encoded: {e}")))
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde::Deserialize;
    use serde_json::json;

    #[derive(Deserialize, Debug)]
    #[allow(dead_code)]
    struct Sample {
        temperature_c: f64,
        items: Vec<Item>,
    }
    #[derive(Deserialize, Debug)]
    #[allow(dead_code)]
    struct Item {
        k: f64,
    }

    #[test]
    fn a_missing_field_is_named() {
        let err = parse_input::<Sample>(json!({"items": []})).unwrap_err();
        assert_eq!(err.field, "temperature_c");
    }

    #[test]
    fn a_wrongly_typed_nested_field_is_named_with_its_path() {
        let err = parse_input::<Sample>(json!({"temperature_c": 1.0, "items": [{"k": "x"}]}))
            .unwrap_err();
        assert_eq!(err.field, "items[0].k");
    }

    #[test]
    fn an_unknown_topic_is_refused() {
        assert_eq!(
            run("nope", json!({})),
            Err(CalcError::UnknownTopic("nope".into()))
        );
    }
}
