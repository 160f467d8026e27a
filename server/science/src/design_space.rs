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
    /// Nothing in the shelf range sublimes at this pressure.
    NoSublimation,
    /// At this pressure ice sublimes only with its front warmer than the limit.
    SublimesOnlyAboveLimit,
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
    /// Hold the limit at the warmer of front and bottom (a eutectic limit) instead of the
    /// front (a collapse limit).
    pub use_bottom: bool,
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

    /// The product temperature held against the limit, °C.
    pub fn peak_c(&self, s: &DryingSummary) -> f64 {
        if self.use_bottom {
            s.peak_front_temp_c.max(s.peak_bottom_temp_c)
        } else {
            s.peak_front_temp_c
        }
    }

    pub fn run(&self, shelf_c: f64, pressure_mtorr: f64) -> Result<DryingSummary, DryingStop> {
        run(&self.product, &self.conditions(shelf_c, pressure_mtorr))
    }

    /// Peak front temperature minus the limit, K, continuous enough for a root solve:
    /// melting counts as far above, a shelf too cold to sublime as the shelf itself.
    fn excess_k(&self, shelf_c: f64, pressure_mtorr: f64) -> f64 {
        match self.run(shelf_c, pressure_mtorr) {
            Ok(s) => c_to_k(self.peak_c(&s)) - self.limit_k,
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
        if k_to_c(self.limit_k) <= equilibrium_c {
            return point(BoundaryState::SublimesOnlyAboveLimit, None);
        }
        if lo >= hi_c {
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
        use_bottom: false,
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::drying::tests::{merge, sucrose_5_percent};
    use crate::drying::{simulate_summary, PrimaryDryingInput};
    use approx::assert_relative_eq;
    use serde_json::json;

    fn grid(shelf: Vec<f64>, pressures: Vec<f64>, limit: f64) -> DesignSpaceInput {
        DesignSpaceInput {
            base: sucrose_5_percent(),
            shelf_temps_c: shelf,
            pressures_mtorr: pressures,
            max_product_temp_c: limit,
            start_shelf_temp_c: None,
            ramp_c_per_min: None,
            sublimation_ceiling_kg_h_m2: None,
            sublimation_ceiling_g_h_per_vial: None,
        }
    }

    fn steps(lo: f64, hi: f64, n: usize) -> Vec<f64> {
        (0..n)
            .map(|i| lo + (hi - lo) * i as f64 / (n - 1) as f64)
            .collect()
    }

    #[test]
    fn a_grid_has_one_cell_per_shelf_temperature_and_pressure_in_order() {
        let space =
            design_space(&grid(vec![-30.0, -20.0, -10.0], vec![60.0, 120.0], -30.0)).unwrap();
        assert_eq!(space.cells.len(), 6);
        let order: Vec<(f64, f64)> = space
            .cells
            .iter()
            .map(|c| (c.chamber_pressure_mtorr, c.shelf_temp_c))
            .collect();
        assert_eq!(
            order,
            [
                (60.0, -30.0),
                (60.0, -20.0),
                (60.0, -10.0),
                (120.0, -30.0),
                (120.0, -20.0),
                (120.0, -10.0)
            ]
        );
        // Each cell is the single simulation at its settings.
        let one = simulate_summary(&PrimaryDryingInput::constant(
            &sucrose_5_percent(),
            -20.0,
            120.0,
        ))
        .unwrap();
        assert_relative_eq!(
            space.cells[4].drying_time_h.unwrap(),
            one.drying_time_h,
            max_relative = 1e-12
        );
        assert_eq!(space.boundary.len(), 2);
        assert!(space.caution.contains("experimentally"));
    }

    #[test]
    fn the_boundary_puts_the_peak_front_temperature_on_the_limit() {
        let limit = -32.0;
        let space = design_space(&grid(
            steps(-40.0, 10.0, 11),
            vec![60.0, 100.0, 150.0],
            limit,
        ))
        .unwrap();
        for b in &space.boundary {
            assert_eq!(b.state, BoundaryState::Crosses, "{b:?}");
            let shelf = b.shelf_temp_c.unwrap();
            let input =
                PrimaryDryingInput::constant(&sucrose_5_percent(), shelf, b.chamber_pressure_mtorr);
            let s = simulate_summary(&input).unwrap();
            assert_relative_eq!(s.peak_front_temp_c, limit, epsilon = 0.01);
            assert_relative_eq!(
                b.drying_time_h.unwrap(),
                s.drying_time_h,
                max_relative = 1e-9
            );
            // Cells colder than the boundary are within the limit, warmer ones are not.
            for c in space.cells.iter().filter(|c| {
                (c.chamber_pressure_mtorr - b.chamber_pressure_mtorr).abs() < 1e-9
                    && c.state == CellState::Dries
            }) {
                assert_eq!(c.within_limit, c.shelf_temp_c < shelf, "{c:?} vs {shelf}");
            }
        }
    }

    #[test]
    fn the_boundary_says_when_the_limit_is_not_met_within_the_range() {
        let b = |limit: f64, lo: f64, hi: f64, p: f64| {
            design_space(&grid(vec![lo, hi], vec![p], limit))
                .unwrap()
                .boundary[0]
                .clone()
        };
        // Warm limit, cold shelves: the peak never reaches it.
        let below = b(-5.0, -40.0, -20.0, 100.0);
        assert_eq!(below.state, BoundaryState::BelowLimitAcrossRange);
        assert_eq!(below.shelf_temp_c, Some(-20.0));
        // At 100 mTorr ice sublimes only above −39.7 °C: a −45 °C limit cannot be kept.
        assert_eq!(
            b(-45.0, -40.0, 0.0, 100.0).state,
            BoundaryState::SublimesOnlyAboveLimit
        );
        assert_eq!(
            b(-30.0, -50.0, -42.0, 100.0).state,
            BoundaryState::NoSublimation
        );
        // A limit just above the equilibrium temperature, shelf range starting well above it.
        assert_eq!(
            b(-39.0, -20.0, 0.0, 100.0).state,
            BoundaryState::AboveLimitAcrossRange
        );
    }

    #[test]
    fn cold_shelves_at_high_pressure_do_not_sublime_and_say_so() {
        let space = design_space(&grid(vec![-45.0, -20.0], vec![200.0], -30.0)).unwrap();
        let cold = &space.cells[0];
        assert_eq!(cold.state, CellState::NoSublimation);
        assert!(!cold.within_limit);
        assert_eq!(cold.drying_time_h, None);
        assert_eq!(space.cells[1].state, CellState::Dries);
    }

    #[test]
    fn a_per_area_ceiling_is_converted_per_vial_and_flags_fast_cells() {
        // 1 kg/(h·m²) over a 4.71 cm² vial footprint: 1000 g × 4.71e-4 = 0.471 g/h.
        assert_relative_eq!(
            SublimationCeiling::PerShelfAreaKgHM2(1.0).per_vial_g_h(4.71),
            0.471,
            max_relative = 1e-12
        );
        let mut input = grid(vec![-30.0, 10.0], vec![100.0], -20.0);
        input.sublimation_ceiling_g_h_per_vial = Some(0.2);
        let space = design_space(&input).unwrap();
        assert_eq!(space.sublimation_ceiling_g_h_per_vial, Some(0.2));
        let flags: Vec<_> = space
            .cells
            .iter()
            .map(|c| c.above_sublimation_ceiling)
            .collect();
        assert_eq!(flags, [Some(false), Some(true)]);
    }

    #[test]
    fn a_ramped_approach_dries_more_slowly_than_a_held_shelf() {
        let mut input = grid(vec![-10.0], vec![100.0], -20.0);
        let held = design_space(&input).unwrap().cells[0]
            .drying_time_h
            .unwrap();
        input.start_shelf_temp_c = Some(-45.0);
        input.ramp_c_per_min = Some(0.5);
        let ramped = design_space(&input).unwrap().cells[0]
            .drying_time_h
            .unwrap();
        assert!(
            ramped > held && ramped < held + 1.2,
            "{held} h vs {ramped} h"
        );
    }

    #[test]
    fn grids_over_100_values_and_bad_fields_are_refused_by_name() {
        let base = serde_json::to_value(grid(vec![-20.0], vec![100.0], -30.0)).unwrap();
        let cases = [
            (
                "shelf_temps_c",
                json!({"shelf_temps_c": steps(-40.0, 0.0, 101)}),
            ),
            ("pressures_mtorr", json!({"pressures_mtorr": []})),
            (
                "pressures_mtorr[1]",
                json!({"pressures_mtorr": [100.0, -3.0]}),
            ),
            ("shelf_temps_c[0]", json!({"shelf_temps_c": [400.0]})),
            (
                "base.vial.inner_area_cm2",
                json!({"base": {"vial": {"inner_area_cm2": 0.0}}}),
            ),
            (
                "base.fill_volume_ml",
                json!({"base": {"fill_volume_ml": "four"}}),
            ),
            ("ramp_c_per_min", json!({"start_shelf_temp_c": -45.0})),
            (
                "sublimation_ceiling_kg_h_m2",
                json!({"sublimation_ceiling_kg_h_m2": 0.0}),
            ),
            ("max_product_temp_c", json!({"max_product_temp_c": 5.0})),
        ];
        for (field, patch) in cases {
            let mut input = base.clone();
            merge(&mut input, &patch);
            let err = calc_design_space(input).unwrap_err();
            assert_eq!(err.field, field, "{patch}: {err}");
        }
        let err = design_space(&grid(steps(-40.0, 0.0, 101), vec![100.0], -30.0)).unwrap_err();
        assert!(err.message.contains("at most 100"), "{}", err.message);
    }

    #[test]
    fn parallel_map_keeps_the_order_of_its_items() {
        let items: Vec<u64> = (0..1000).collect();
        let out = parallel_map(&items, |i| i * i);
        assert_eq!(out, items.iter().map(|i| i * i).collect::<Vec<_>>());
        assert!(parallel_map(&[] as &[u64], |i| *i).is_empty());
    }
}
