//! The calculation topics read from a run: `kv-from-gravimetric`, `kv-fit`,
//! `rp-from-product-temperature`, `secondary-drying-kinetics` and `end-of-primary-drying`.

use serde::{Deserialize, Serialize};
use serde_json::Value;

use super::endpoint::comparative_pressure;
use super::kv::{fit_kv, kv_from_gravimetric, GravimetricInput, KvPoint};
use super::rp::{rp_from_product_temperature, RpInput};
use super::secondary::{secondary_kinetics, SecondaryInput};
use super::series::nan_as_null;
use crate::calc::{parse_input, to_output};
use crate::error::InputError;

/// `kv-fit` input.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct KvFitInput {
    pub points: Vec<KvPoint>,
}

/// `end-of-primary-drying` input: the two gauges through primary drying (`null` where a
/// gauge has no reading).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct EndOfPrimaryInput {
    pub time_h: Vec<f64>,
    #[serde(with = "nan_as_null")]
    pub pirani_mtorr: Vec<f64>,
    #[serde(with = "nan_as_null")]
    pub manometer_mtorr: Vec<f64>,
}

/// `kv-from-gravimetric` topic.
pub fn calc_kv_from_gravimetric(input: Value) -> Result<Value, InputError> {
    let input: GravimetricInput = parse_input(input)?;
    to_output(&kv_from_gravimetric(&input)?)
}

/// `kv-fit` topic.
pub fn calc_kv_fit(input: Value) -> Result<Value, InputError> {
    let input: KvFitInput = parse_input(input)?;
    to_output(&fit_kv(&input.points)?)
}

/// `rp-from-product-temperature` topic.
pub fn calc_rp_from_product_temperature(input: Value) -> Result<Value, InputError> {
    let input: RpInput = parse_input(input)?;
    to_output(&rp_from_product_temperature(&input)?)
}

/// `secondary-drying-kinetics` topic.
pub fn calc_secondary_drying_kinetics(input: Value) -> Result<Value, InputError> {
    let input: SecondaryInput = parse_input(input)?;
    to_output(&secondary_kinetics(&input)?)
}

/// `end-of-primary-drying` topic.
pub fn calc_end_of_primary_drying(input: Value) -> Result<Value, InputError> {
    let input: EndOfPrimaryInput = parse_input(input)?;
    to_output(&comparative_pressure(
        &input.time_h,
        &input.pirani_mtorr,
        &input.manometer_mtorr,
    )?)
}
