//! Design space: the primary-drying model over a grid of shelf temperature × chamber
//! pressure, with the boundary where the peak front temperature equals the product's limit
//! and an optional equipment ceiling on the sublimation rate.
//!
//! Each cell holds its shelf temperature from the start, or ramps to it from
//! `start_shelf_temp_c` at `ramp_c_per_min` when both are given. Cells are computed on all
//! cores.

use std::sync::atomic::{AtomicUsize, Ordering};

use serde::{Deserialize, Serialize};

use crate::drying::{
    chamber_pressure_pa, product_limit_k, run, Conditions, DryingBase, DryingStop, DryingSummary,
    Product, ShelfPlan,
};
use crate::error::{finite, positive, InputError};
use crate::units::{c_to_k, k_to_c, mtorr_to_pa};

/// Most values accepted on either axis of a grid.
pub const MAX_AXIS_VALUES: usize = 100;

const CAUTION: &str = "A model of one vial to support qualified judgement: edge vials, \
    shelf-to-shelf differences and uncertain Kv and Rp move the real boundary, so confirm \
    a cycle experimentally before relying on it.";

/// An equipment limit on sublimation, given per shelf area or per vial.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum SublimationCeiling {
    /// kg of ice per hour per m² of shelf. Each vial is taken to occupy its outer bottom
    /// area, which counts about 10 % more vials than a hexagonal packing of round vials
    /// (π/(2√3) ≈ 0.907 covered) and so errs on the side of flagging.
    PerShelfAreaKgHM2(f64),
    /// g of ice per hour per vial.
    PerVialGH(f64),
}

impl SublimationCeiling {
    /// Check the one ceiling given, if any (named by its JSON field).
    pub fn from_fields(
        per_shelf_area_kg_h_m2: Option<f64>,
        per_vial_g_h: Option<f64>,
    ) -> Result<Option<Self>, InputError> {
        match (per_shelf_area_kg_h_m2, per_vial_g_h) {
            (Some(_), Some(_)) => Err(InputError::new(
                "sublimation_ceiling_g_h_per_vial",
                "give the ceiling per shelf area or per vial, not both",
            )),
            (Some(v), None) => Ok(Some(Self::PerShelfAreaKgHM2(positive(
                "sublimation_ceiling_kg_h_m2",
                v,
            )?))),
            (None, Some(v)) => Ok(Some(Self::PerVialGH(positive(
                "sublimation_ceiling_g_h_per_vial",
                v,
            )?))),
            (None, None) => Ok(None),
        }
    }

    /// The ceiling for one vial of outer bottom area `outer_area_cm2`, g/h:
    /// kg/(h·m²) × 1000 g/kg × Av·10⁻⁴ m².
    pub fn per_vial_g_h(&self, outer_area_cm2: f64) -> f64 {
        match *self {
            Self::PerShelfAreaKgHM2(kg_h_m2) => kg_h_m2 * 0.1 * outer_area_cm2,
            Self::PerVialGH(g_h) => g_h,
        }
    }
}

/// `design-space` topic input.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DesignSpaceInput {
    pub base: DryingBase,
    pub shelf_temps_c: Vec<f64>,
    pub pressures_mtorr: Vec<f64>,
    pub max_product_temp_c: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub start_shelf_temp_c: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ramp_c_per_min: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sublimation_ceiling_kg_h_m2: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sublimation_ceiling_g_h_per_vial: Option<f64>,
}

/// What the model says of one cell.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum CellState {
    Dries,
    NoSublimation,
    IceMelts,
    TooSlow,
}

/// One shelf temperature × chamber pressure.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DesignCell {
    pub shelf_temp_c: f64,
    pub chamber_pressure_mtorr: f64,
    pub state: CellState,
    pub drying_time_h: Option<f64>,
    pub peak_front_temp_c: Option<f64>,
    pub peak_bottom_temp_c: Option<f64>,
    pub peak_sublimation_rate_g_h: Option<f64>,
    /// True when the vial dries with the front never above the limit.
    pub within_limit: bool,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub above_sublimation_ceiling: Option<bool>,
}

/// How the limit meets one pressure across the shelf range.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum BoundaryState {
    /// The peak equals the limit at `shelf_temp_c`.
    Crosses,
    /// Even the warmest shelf in range keeps the peak below the limit.
    BelowLimitAcrossRange,
    /// Even the coldest shelf that sublimes puts the peak above the limit.
    AboveLimitAcrossRange,
    /// Nothing in the shelf range sublimes at this pressure, or ice sublimes here only
    /// with its front warmer than the limit.
    NoSublimation,
}

/// The hottest shelf temperature that keeps the peak front temperature at the limit.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BoundaryPoint {
    pub chamber_pressure_mtorr: f64,
    pub state: BoundaryState,
    /// The shelf temperature where the peak equals the limit, or the hottest in range when
    /// the peak stays below it.
    pub shelf_temp_c: Option<f64>,
    pub drying_time_h: Option<f64>,
}

/// Per pressure, what follows from it alone.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PressureFacts {
    pub chamber_pressure_mtorr: f64,
    pub kv_w_m2k: f64,
    /// Ice sublimes only with its front warmer than this.
    pub equilibrium_front_temp_c: f64,
}

/// `design-space` topic result. `cells` run pressure by pressure, shelf temperatures in the
/// order given within each pressure.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DesignSpace {
    pub max_product_temp_c: f64,
    pub cells: Vec<DesignCell>,
    pub boundary: Vec<BoundaryPoint>,
    pub pressures: Vec<PressureFacts>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sublimation_ceiling_g_h_per_vial: Option<f64>,
    pub caution: String,
}

/// How each cell's shelf reaches its temperature.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum Approach {
    Held,
    Ramped { start_c: f64, ramp_c_per_min: f64 },
}

impl Approach {
    /// Check the optional start and ramp (both or neither).
    pub(crate) fn from_fields(start_c: Option<f64>, ramp: Option<f64>) -> Result<Self, InputError> {
        match (start_c, ramp) {
            (None, None) => Ok(Self::Held),
            (Some(_), None) => Err(InputError::new(
                "ramp_c_per_min",
                "a starting shelf temperature needs a ramp rate",
            )),
            (None, Some(_)) => Err(InputError::new(
                "start_shelf_temp_c",
                "a ramp rate needs a starting shelf temperature",
            )),
            (Some(start), Some(ramp)) => Ok(Self::Ramped {
                start_c: shelf_temp_c("start_shelf_temp_c", start)?,
                ramp_c_per_min: positive("ramp_c_per_min", ramp)?,
            }),
        }
    }

    fn plan(&self, shelf_c: f64) -> ShelfPlan {
        match *self {
            Self::Held => ShelfPlan::constant(shelf_c),
            Self::Ramped {
                start_c,
                ramp_c_per_min,
            } => ShelfPlan::ramp_then_hold(start_c, ramp_c_per_min, shelf_c),
        }
    }
}

/// A shelf temperature for a grid or search, −100 to +100 °C.
pub(crate) fn shelf_temp_c(field: &str, v: f64) -> Result<f64, InputError> {
    let v = finite(field, v)?;
    if (-100.0..=100.0).contains(&v) {
        Ok(v)
    } else {
        Err(InputError::new(
            field,
            format!("a shelf temperature lies between −100 and 100 °C (got {v})"),
        ))
    }
}

/// The model of one product at any shelf temperature and pressure, checked once.
#[derive(Debug, Clone)]
pub(crate) struct Explorer {
    pub product: Product,
    pub approach: Approach,
    pub limit_k: f64,
}

impl Explorer {
    pub fn conditions(&self, shelf_c: f64, pressure_mtorr: f64) -> Conditions {
        let plan = self.approach.plan(shelf_c);
        Conditions::new(
            &self.product,
            plan,
            mtorr_to_pa(pressure_mtorr),
            Some(self.limit_k),
        )
    }

    pub fn run(&self, shelf_c: f64, pressure_mtorr: f64) -> Result<DryingSummary, DryingStop> {
        run(&self.product, &self.conditions(shelf_c, pressure_mtorr))
    }

    /// Peak front temperature minus the limit, K, continuous enough for a root solve:
    /// melting counts as far above, a shelf too cold to sublime as the shelf itself.
    fn excess_k(&self, shelf_c: f64, pressure_mtorr: f64) -> f64 {
        match self.run(shelf_c, pressure_mtorr) {
            Ok(s) => c_to_k(s.peak_front_temp_c) - self.limit_k,
            Err(DryingStop::IceWouldMelt { .. }) => 273.15 - self.limit_k,
            Err(DryingStop::NoSublimation { .. } | DryingStop::TooSlow { .. }) => {
                c_to_k(shelf_c) - self.limit_k
            }
            Err(DryingStop::Solver(_)) => f64::NAN,
        }
    }

    /// The hottest shelf temperature within `[lo_c, hi_c]` that keeps the peak front
    /// temperature at or below the limit, at one pressure.
    pub fn boundary(&self, pressure_mtorr: f64, lo_c: f64, hi_c: f64) -> BoundaryPoint {
        let equilibrium_c = self.conditions(hi_c, pressure_mtorr).equilibrium_temp_c();
        let point = |state, shelf: Option<f64>| BoundaryPoint {
            chamber_pressure_mtorr: pressure_mtorr,
            state,
            shelf_temp_c: shelf,
            drying_time_h: shelf
                .and_then(|t| self.run(t, pressure_mtorr).ok())
                .map(|s| s.drying_time_h),
        };
        // Just above the equilibrium temperature the front sits at it.
        let lo = lo_c.max(equilibrium_c + 1e-3);
        if lo >= hi_c || k_to_c(self.limit_k) <= equilibrium_c {
            return point(BoundaryState::NoSublimation, None);
        }
        let excess_hi = self.excess_k(hi_c, pressure_mtorr);
        if excess_hi <= 0.0 {
            return point(BoundaryState::BelowLimitAcrossRange, Some(hi_c));
        }
        if self.excess_k(lo, pressure_mtorr) > 0.0 {
            return point(BoundaryState::AboveLimitAcrossRange, None);
        }
        match crate::roots::brent(|t| self.excess_k(t, pressure_mtorr), lo, hi_c, 5e-3) {
            Ok(root) => point(BoundaryState::Crosses, Some(root.x)),
            Err(_) => point(BoundaryState::AboveLimitAcrossRange, None),
        }
    }
}

/// `f` over `items` on all available cores, results in the order of `items`.
pub(crate) fn parallel_map<T: Sync, R: Send>(items: &[T], f: impl Fn(&T) -> R + Sync) -> Vec<R> {
    let threads = std::thread::available_parallelism()
        .map_or(1, |n| n.get())
        .min(items.len());
    if threads <= 1 {
        return items.iter().map(f).collect();
    }
    let next = AtomicUsize::new(0);
    let mut done: Vec<(usize, R)> = std::thread::scope(|scope| {
        let workers: Vec<_> = (0..threads)
            .map(|_| {
                scope.spawn(|| {
                    let mut out = Vec::new();
                    loop {
                        let i = next.fetch_add(1, Ordering::Relaxed);
                        let Some(item) = items.get(i) else { break out };
                        out.push((i, f(item)));
                    }
                })
            })
            .collect();
        workers
            .into_iter()
            .flat_map(|w| match w.join() {
                Ok(out) => out,
                Err(panic) => std::panic::resume_unwind(panic),
            })
            .collect()
    });
    done.sort_unstable_by_key(|(i, _)| *i);
    done.into_iter().map(|(_, r)| r).collect()
}

fn axis(
    field: &str,
    values: &[f64],
    check: impl Fn(&str, f64) -> Result<f64, InputError>,
) -> Result<(), InputError> {
    if values.is_empty() {
        return Err(InputError::new(field, "needs at least one value"));
    }
    if values.len() > MAX_AXIS_VALUES {
        return Err(InputError::new(
            field,
            format!(
                "a design space takes at most {MAX_AXIS_VALUES} values per axis (got {}); \
                 the boundary is solved exactly, so a coarser grid loses little",
                values.len()
            ),
        ));
    }
    for (i, v) in values.iter().enumerate() {
        check(&format!("{field}[{i}]"), *v)?;
    }
    Ok(())
}

/// The model over the grid, with the boundary per pressure.
pub fn design_space(input: &DesignSpaceInput) -> Result<DesignSpace, InputError> {
    let product = Product::new(&input.base).map_err(|e| e.within("base."))?;
    axis("shelf_temps_c", &input.shelf_temps_c, shelf_temp_c)?;
    axis("pressures_mtorr", &input.pressures_mtorr, |f, v| {
        chamber_pressure_pa(f, v)
    })?;
    let limit_k = product_limit_k("max_product_temp_c", input.max_product_temp_c)?;
    let approach = Approach::from_fields(input.start_shelf_temp_c, input.ramp_c_per_min)?;
    let ceiling = SublimationCeiling::from_fields(
        input.sublimation_ceiling_kg_h_m2,
        input.sublimation_ceiling_g_h_per_vial,
    )?
    .map(|c| c.per_vial_g_h(product.outer_area_cm2()));
    let explorer = Explorer {
        product,
        approach,
        limit_k,
    };

    enum Task {
        Cell(f64, f64),
        Boundary(f64),
    }
    enum Answer {
        Cell(DesignCell),
        Boundary(BoundaryPoint),
    }
    let (lo, hi) = input
        .shelf_temps_c
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &t| {
            (lo.min(t), hi.max(t))
        });
    // Boundary tasks first: each costs several cells, so they are best started early.
    let tasks: Vec<Task> = input
        .pressures_mtorr
        .iter()
        .map(|&p| Task::Boundary(p))
        .chain(
            input
                .pressures_mtorr
                .iter()
                .flat_map(|&p| input.shelf_temps_c.iter().map(move |&t| Task::Cell(t, p))),
        )
        .collect();
    let answers = parallel_map(&tasks, |task| match *task {
        Task::Cell(t, p) => Answer::Cell(cell(&explorer, t, p, ceiling)),
        Task::Boundary(p) => Answer::Boundary(explorer.boundary(p, lo, hi)),
    });
    let (mut cells, mut boundary) = (Vec::new(), Vec::new());
    for answer in answers {
        match answer {
            Answer::Cell(c) => cells.push(c),
            Answer::Boundary(b) => boundary.push(b),
        }
    }
    let pressures = input
        .pressures_mtorr
        .iter()
        .map(|&p| {
            let c = explorer.conditions(hi, p);
            PressureFacts {
                chamber_pressure_mtorr: p,
                kv_w_m2k: c.kv_w_m2k(),
                equilibrium_front_temp_c: c.equilibrium_temp_c(),
            }
        })
        .collect();
    Ok(DesignSpace {
        max_product_temp_c: input.max_product_temp_c,
        cells,
        boundary,
        pressures,
        sublimation_ceiling_g_h_per_vial: ceiling,
        caution: CAUTION.to_string(),
    })
}

fn cell(
    explorer: &Explorer,
    shelf_c: f64,
    pressure_mtorr: f64,
    ceiling: Option<f64>,
) -> DesignCell {
    let outcome = explorer.run(shelf_c, pressure_mtorr);
    let state = match &outcome {
        Ok(_) => CellState::Dries,
        Err(DryingStop::NoSublimation { .. }) => CellState::NoSublimation,
        Err(DryingStop::IceWouldMelt { .. }) => CellState::IceMelts,
        Err(DryingStop::TooSlow { .. } | DryingStop::Solver(_)) => CellState::TooSlow,
    };
    let s = outcome.ok();
    DesignCell {
        shelf_temp_c: shelf_c,
        chamber_pressure_mtorr: pressure_mtorr,
        state,
        drying_time_h: s.as_ref().map(|s| s.drying_time_h),
        peak_front_temp_c: s.as_ref().map(|s| s.peak_front_temp_c),
        peak_bottom_temp_c: s.as_ref().map(|s| s.peak_bottom_temp_c),
        peak_sublimation_rate_g_h: s.as_ref().map(|s| s.peak_sublimation_rate_g_h),
        within_limit: s
            .as_ref()
            .is_some_and(|s| c_to_k(s.peak_front_temp_c) <= explorer.limit_k),
        above_sublimation_ceiling: ceiling
            .zip(s.as_ref())
            .map(|(c, s)| s.peak_sublimation_rate_g_h > c),
    }
}

/// `design-space` topic.
pub fn calc_design_space(input: serde_json::Value) -> Result<serde_json::Value, InputError> {
    let input: DesignSpaceInput = crate::calc::parse_input(input)?;
    crate::calc::to_output(&design_space(&input)?)
}
