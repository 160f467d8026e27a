//! Glass transition of the dried cake against its residual moisture, and the inverse: the
//! most water a cake may hold and keep its Tg a chosen margin above storage.
//!
//! Gordon & Taylor (1952), J. Appl. Chem. 2:493, with water as the second component and
//! k multiplying the water term: Tg = (w_s·Tg_s + k·w_w·Tg_w)/(w_s + k·w_w), w_s = 1 − w_w,
//! fractions on a total (wet) mass basis. Tg of water 136 K (Johari, Hallbrucker & Mayer
//! 1987, Nature 330:552).

use serde::{Deserialize, Serialize};

use crate::error::{celsius_to_kelvin_checked, finite, non_negative, positive, InputError};
use crate::mixture::gordon_taylor_binary;
use crate::units::k_to_c;

/// Tg of amorphous water, K (Johari, Hallbrucker & Mayer 1987).
pub const WATER_TG_K: f64 = 136.0;
/// Storage margin below which the result adds a hint: at least 20 °C below the cake Tg is
/// often advised (Hancock, Shamblin & Zografi 1995, Pharm. Res. 12:799; from memory).
const ADVISED_STORAGE_MARGIN_C: f64 = 20.0;
/// Most steps a curve computes.
pub const MAX_CURVE_STEPS: usize = 1000;

const CAUTION: &str = "A model estimate to support qualified judgement; confirm the cake Tg \
    at the intended moisture by measurement before relying on it.";

/// A cake's Gordon–Taylor parameters, checked once.
#[derive(Debug, Clone, Copy, PartialEq)]
struct CakeModel {
    solids_tg_k: f64,
    k: f64,
    water_tg_k: f64,
}

impl CakeModel {
    fn new(solids_tg_c: f64, k: f64, water_tg_c: Option<f64>) -> Result<Self, InputError> {
        let solids_tg_k = celsius_to_kelvin_checked("solids_tg_c", solids_tg_c)?;
        let k = positive("k", k)?;
        let water_tg_k = match water_tg_c {
            Some(t) => celsius_to_kelvin_checked("water_tg_c", t)?,
            None => WATER_TG_K,
        };
        if solids_tg_k <= water_tg_k {
            return Err(InputError::new(
                "solids_tg_c",
                format!(
                    "the dry solids' Tg must lie above the Tg of water ({:.2} °C)",
                    k_to_c(water_tg_k)
                ),
            ));
        }
        Ok(Self {
            solids_tg_k,
            k,
            water_tg_k,
        })
    }

    fn tg_k(&self, water_fraction: f64) -> f64 {
        gordon_taylor_binary(water_fraction, self.solids_tg_k, self.water_tg_k, self.k)
    }

    /// The water fraction at which Tg equals `target_k` (for Tg_w < target ≤ Tg_s), from
    /// (1 − w)(Tg_s − T) = k·w·(T − Tg_w).
    fn water_fraction_at(&self, target_k: f64) -> f64 {
        let dry_excess = self.solids_tg_k - target_k;
        dry_excess / (dry_excess + self.k * (target_k - self.water_tg_k))
    }
}

/// `cake-tg` topic input.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CakeTgInput {
    pub solids_tg_c: f64,
    /// Gordon–Taylor k multiplying the water term.
    pub k: f64,
    /// Water mass fraction of the cake (0–1, total mass basis).
    pub water_fraction: f64,
    /// Tg of water; 136 K (−137.15 °C) when omitted.
    #[serde(default)]
    pub water_tg_c: Option<f64>,
}

/// `cake-tg` topic result.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CakeTgResult {
    pub tg_c: f64,
    pub water_fraction: f64,
    pub water_tg_c: f64,
    pub method: String,
}

/// Tg of a cake holding `water_fraction` of water (Gordon–Taylor, module docs).
pub fn cake_tg(input: &CakeTgInput) -> Result<CakeTgResult, InputError> {
    let model = CakeModel::new(input.solids_tg_c, input.k, input.water_tg_c)?;
    let w = finite("water_fraction", input.water_fraction)?;
    if !(0.0..=1.0).contains(&w) {
        return Err(InputError::new(
            "water_fraction",
            format!("must lie between 0 and 1 (got {w}); give percent divided by 100"),
        ));
    }
    Ok(CakeTgResult {
        tg_c: k_to_c(model.tg_k(w)),
        water_fraction: w,
        water_tg_c: k_to_c(model.water_tg_k),
        method: "Gordon & Taylor (1952) with water (Tg 136 K unless given)".into(),
    })
}

/// `cake-moisture-limit` topic input.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CakeMoistureLimitInput {
    pub solids_tg_c: f64,
    pub k: f64,
    pub storage_temp_c: f64,
    /// How far above storage the cake Tg must stay, °C.
    pub margin_c: f64,
    #[serde(default)]
    pub water_tg_c: Option<f64>,
}

/// `cake-moisture-limit` topic result.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CakeMoistureLimit {
    pub max_water_fraction: f64,
    pub max_water_percent: f64,
    pub tg_at_limit_c: f64,
    pub target_tg_c: f64,
    pub dry_tg_c: f64,
    pub water_tg_c: f64,
    pub reasoning: Vec<String>,
    pub caution: String,
}

/// The largest water fraction that keeps the cake Tg at or above `storage_temp_c +
/// margin_c`, solved analytically from the Gordon–Taylor equation (module docs). Refuses a
/// target above the dry solids' Tg, where no water content is low enough.
pub fn cake_moisture_limit(
    input: &CakeMoistureLimitInput,
) -> Result<CakeMoistureLimit, InputError> {
    let model = CakeModel::new(input.solids_tg_c, input.k, input.water_tg_c)?;
    let storage_k = celsius_to_kelvin_checked("storage_temp_c", input.storage_temp_c)?;
    let margin = non_negative("margin_c", input.margin_c)?;
    let target_k = storage_k + margin;
    let (dry_c, target_c) = (k_to_c(model.solids_tg_k), k_to_c(target_k));
    if target_k > model.solids_tg_k {
        let field = if storage_k >= model.solids_tg_k {
            "storage_temp_c"
        } else {
            "margin_c"
        };
        return Err(InputError::new(
            field,
            format!(
                "storage at {:.1} °C plus a margin of {margin:.1} °C needs a cake Tg of \
                 {target_c:.1} °C, above the dry solids' Tg of {dry_c:.1} °C: no water \
                 content is low enough",
                input.storage_temp_c
            ),
        ));
    }
    let mut reasoning = vec![format!(
        "The cake Tg must stay at or above {target_c:.1} °C (storage {:.1} °C + margin \
         {margin:.1} °C); the dry solids' Tg is {dry_c:.1} °C.",
        input.storage_temp_c
    )];
    let max_w = if target_k <= model.water_tg_k {
        reasoning.push(
            "The target lies at or below the Tg of water, so by this model any water \
             content keeps Tg above it."
                .into(),
        );
        1.0
    } else {
        model.water_fraction_at(target_k)
    };
    reasoning.push(format!(
        "Gordon–Taylor with k = {} and water Tg {:.2} °C gives Tg = {target_c:.1} °C at \
         {:.2} % water (w/w, total mass basis); drier cakes have a higher Tg.",
        model.k,
        k_to_c(model.water_tg_k),
        max_w * 100.0
    ));
    if margin < ADVISED_STORAGE_MARGIN_C {
        reasoning.push(format!(
            "The margin of {margin:.1} °C is below the {ADVISED_STORAGE_MARGIN_C:.0} °C \
             often advised between storage and cake Tg (Hancock, Shamblin & Zografi 1995)."
        ));
    }
    Ok(CakeMoistureLimit {
        max_water_fraction: max_w,
        max_water_percent: max_w * 100.0,
        tg_at_limit_c: k_to_c(model.tg_k(max_w)),
        target_tg_c: target_c,
        dry_tg_c: dry_c,
        water_tg_c: k_to_c(model.water_tg_k),
        reasoning,
        caution: CAUTION.into(),
    })
}

/// Cake Tg over water fractions 0 to `max_water_fraction` in `steps` equal steps, for a
/// chart: `(water_fraction, tg_c)` pairs.
pub fn cake_tg_curve(
    solids_tg_c: f64,
    k: f64,
    water_tg_c: Option<f64>,
    max_water_fraction: f64,
    steps: usize,
) -> Result<Vec<(f64, f64)>, InputError> {
    let model = CakeModel::new(solids_tg_c, k, water_tg_c)?;
    let top = positive("max_water_fraction", max_water_fraction)?;
    if top > 1.0 {
        return Err(InputError::new("max_water_fraction", "must not exceed 1"));
    }
    if steps == 0 || steps > MAX_CURVE_STEPS {
        return Err(InputError::new(
            "steps",
            format!("must be between 1 and {MAX_CURVE_STEPS} (got {steps})"),
        ));
    }
    Ok((0..=steps)
        .map(|i| {
            let w = top * i as f64 / steps as f64;
            (w, k_to_c(model.tg_k(w)))
        })
        .collect())
}

/// `cake-tg` topic.
pub fn calc_cake_tg(input: serde_json::Value) -> Result<serde_json::Value, InputError> {
    let req: CakeTgInput = crate::calc::parse_input(input)?;
    crate::calc::to_output(&cake_tg(&req)?)
}

/// `cake-moisture-limit` topic.
pub fn calc_cake_moisture_limit(input: serde_json::Value) -> Result<serde_json::Value, InputError> {
    let req: CakeMoistureLimitInput = crate::calc::parse_input(input)?;
    crate::calc::to_output(&cake_moisture_limit(&req)?)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use proptest::prelude::*;
    use serde_json::json;

    fn sucrose_limit(storage_temp_c: f64, margin_c: f64) -> CakeMoistureLimitInput {
        // Sucrose Tg 62 °C and k = 4.7 (Roos 1993, from memory).
        CakeMoistureLimitInput {
            solids_tg_c: 62.0,
            k: 4.7,
            storage_temp_c,
            margin_c,
            water_tg_c: None,
        }
    }

    #[test]
    fn sucrose_with_5_percent_water_matches_a_hand_computation() {
        // Roos (1993): sucrose Tg 62 °C, k = 4.7 (from memory); water 136 K (Johari et al.
        // 1987). By hand: (0.95·335.15 + 4.7·0.05·136)/1.185 = 295.6561 K = 22.5061 °C.
        let out =
            calc_cake_tg(json!({"solids_tg_c": 62.0, "k": 4.7, "water_fraction": 0.05})).unwrap();
        assert_relative_eq!(out["tg_c"].as_f64().unwrap(), 22.5061, max_relative = 1e-5);
        assert_relative_eq!(
            out["water_tg_c"].as_f64().unwrap(),
            -137.15,
            max_relative = 1e-12
        );
    }

    #[test]
    fn a_dry_cake_has_the_solids_tg() {
        let r = cake_tg(&CakeTgInput {
            solids_tg_c: 106.0,
            k: 6.5,
            water_fraction: 0.0,
            water_tg_c: None,
        })
        .unwrap();
        assert_relative_eq!(r.tg_c, 106.0, max_relative = 1e-12);
    }

    #[test]
    fn the_moisture_limit_round_trips_through_the_forward_equation() {
        let limit = cake_moisture_limit(&sucrose_limit(5.0, 20.0)).unwrap();
        assert_relative_eq!(limit.tg_at_limit_c, 25.0, max_relative = 1e-9);
        assert_relative_eq!(limit.target_tg_c, 25.0, max_relative = 1e-12);
        let forward = cake_tg(&CakeTgInput {
            solids_tg_c: 62.0,
            k: 4.7,
            water_fraction: limit.max_water_fraction,
            water_tg_c: None,
        })
        .unwrap();
        assert_relative_eq!(forward.tg_c, 25.0, max_relative = 1e-9);
        assert_relative_eq!(limit.max_water_percent, limit.max_water_fraction * 100.0);
        // 22.5 °C at 5 % water (hand computation above): 25 °C needs a little less.
        assert!(limit.max_water_fraction < 0.05 && limit.max_water_fraction > 0.04);
    }

    #[test]
    fn a_target_above_the_dry_tg_is_refused_naming_the_input_at_fault() {
        let err = cake_moisture_limit(&sucrose_limit(25.0, 40.0)).unwrap_err();
        assert_eq!(err.field, "margin_c");
        assert!(err.message.contains("no water"));
        let err = cake_moisture_limit(&sucrose_limit(70.0, 0.0)).unwrap_err();
        assert_eq!(err.field, "storage_temp_c");
    }

    #[test]
    fn a_target_below_the_water_tg_allows_any_water() {
        let limit = cake_moisture_limit(&sucrose_limit(-190.0, 10.0)).unwrap();
        assert_relative_eq!(limit.max_water_fraction, 1.0);
    }

    #[test]
    fn bad_inputs_are_refused_with_their_field_named() {
        let tg = |v: serde_json::Value| calc_cake_tg(v).unwrap_err().field;
        assert_eq!(
            tg(json!({"solids_tg_c": 62.0, "k": 0.0, "water_fraction": 0.1})),
            "k"
        );
        assert_eq!(
            tg(json!({"solids_tg_c": 62.0, "k": -4.7, "water_fraction": 0.1})),
            "k"
        );
        assert_eq!(
            tg(json!({"solids_tg_c": 62.0, "k": 4.7, "water_fraction": 1.2})),
            "water_fraction"
        );
        assert_eq!(
            tg(json!({"solids_tg_c": 62.0, "k": 4.7, "water_fraction": -0.1})),
            "water_fraction"
        );
        assert_eq!(
            tg(json!({"solids_tg_c": -300.0, "k": 4.7, "water_fraction": 0.1})),
            "solids_tg_c"
        );
        assert_eq!(
            tg(json!({"solids_tg_c": -150.0, "k": 4.7, "water_fraction": 0.1})),
            "solids_tg_c"
        );
        assert_eq!(tg(json!({"solids_tg_c": 62.0, "k": 4.7})), "water_fraction");
        let lim = |v: serde_json::Value| calc_cake_moisture_limit(v).unwrap_err().field;
        assert_eq!(
            lim(json!({"solids_tg_c": 62.0, "k": 4.7, "storage_temp_c": 5.0, "margin_c": -1.0})),
            "margin_c"
        );
        assert!(cake_tg_curve(62.0, 4.7, None, 0.2, 0).is_err());
        assert_eq!(
            cake_tg_curve(62.0, f64::NAN, None, 0.2, 10)
                .unwrap_err()
                .field,
            "k"
        );
        assert_eq!(
            cake_tg_curve(62.0, 4.7, Some(f64::INFINITY), 0.2, 10)
                .unwrap_err()
                .field,
            "water_tg_c"
        );
    }

    #[test]
    fn the_curve_falls_from_the_dry_tg_as_water_is_added() {
        let curve = cake_tg_curve(62.0, 4.7, None, 0.2, 20).unwrap();
        assert_eq!(curve.len(), 21);
        assert_relative_eq!(curve[0].1, 62.0, max_relative = 1e-12);
        assert!(curve.windows(2).all(|p| p[1].1 < p[0].1));
    }

    proptest! {
        #[test]
        fn the_limit_always_reproduces_its_target(
            solids in 20.0f64..150.0, k in 0.5f64..10.0, storage in -40.0f64..20.0,
            margin in 0.0f64..30.0,
        ) {
            prop_assume!(storage + margin < solids);
            let r = cake_moisture_limit(&CakeMoistureLimitInput {
                solids_tg_c: solids, k, storage_temp_c: storage, margin_c: margin, water_tg_c: None,
            }).unwrap();
            prop_assert!((r.tg_at_limit_c - (storage + margin)).abs() < 1e-6);
            prop_assert!((0.0..=1.0).contains(&r.max_water_fraction));
        }
    }
}
