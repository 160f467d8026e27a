//! Everything a run is read against: its cycle, container, dryer and probed formulation,
//! the formulation's limit, and the model rerun for the run's load on today's basis.

use glasspoint_science::batch::{BatchResult, VialClass};
use glasspoint_science::drying::DryingBase;
use glasspoint_science::runs::{compare_probe, ProbeComparison, ProbePosition, RunSeries};
use glasspoint_science::verdict::{assess_cycle, Load, VerdictOptions};
use time::OffsetDateTime;

use super::{read, science_series, Reading};
use crate::derive::{derive, drying_base, facts, resistance_of, team_basis, Derived};
use crate::domain::runs::Run;
use crate::domain::{Container, Cycle, DryLayerResistance, Dryer, Formulation};
use crate::error::AppError;
use crate::storage::{ModelCheck, Store};

/// The model rerun for a run's load, on the team's current Kv and Rp.
pub struct Prediction {
    /// In words: which Kv and Rp the model used.
    pub basis: String,
    /// Identifies the basis (record ids and versions).
    pub basis_key: String,
    /// Hours into the record at which the model's primary drying starts.
    pub offset_h: f64,
    pub batch: BatchResult,
    /// Probes against the predicted bottom temperature of their class.
    pub comparisons: Vec<ProbeComparison>,
    /// Predicted minus measured end of primary drying (last vials), h.
    pub end_error_h: Option<f64>,
}

impl Prediction {
    pub fn last_dry_h(&self) -> f64 {
        self.offset_h + self.batch.last_dry_h
    }

    pub fn first_dry_h(&self) -> f64 {
        self.offset_h + self.batch.first_dry_h
    }

    /// A class's predicted bottom temperature on the record's time axis.
    pub fn bottom_series(&self, class: VialClass) -> Vec<(f64, f64)> {
        self.batch
            .class(class)
            .map(|c| {
                c.series
                    .iter()
                    .map(|p| (p.time_h + self.offset_h, p.bottom_temp_c))
                    .collect()
            })
            .unwrap_or_default()
    }

    /// Root-mean-square of every probe's difference, weighted by its points.
    pub fn probe_rmse_c(&self) -> Option<f64> {
        let n: usize = self.comparisons.iter().map(|c| c.points).sum();
        (n > 0).then(|| {
            let sum: f64 = self
                .comparisons
                .iter()
                .map(|c| c.rmse_c * c.rmse_c * c.points as f64)
                .sum();
            (sum / n as f64).sqrt()
        })
    }

    pub fn summary(&self) -> PredictionSummary {
        PredictionSummary {
            basis: self.basis.clone(),
            first_dry_h: self.first_dry_h(),
            last_dry_h: self.last_dry_h(),
            end_error_h: self.end_error_h,
            probe_rmse_c: self.probe_rmse_c(),
            probes: self.comparisons.clone(),
        }
    }

    pub fn model_check(&self, measured_end_h: Option<f64>) -> ModelCheck {
        ModelCheck {
            basis: self.basis.clone(),
            basis_key: self.basis_key.clone(),
            predicted_end_h: Some(self.last_dry_h()),
            measured_end_h,
            end_error_h: self.end_error_h,
            probe_rmse_c: self.probe_rmse_c(),
            checked_at: OffsetDateTime::now_utc(),
        }
    }
}

/// A prediction's figures, for the page and the API.
#[derive(Debug, Clone, serde::Serialize)]
pub struct PredictionSummary {
    pub basis: String,
    pub first_dry_h: f64,
    pub last_dry_h: f64,
    pub end_error_h: Option<f64>,
    pub probe_rmse_c: Option<f64>,
    pub probes: Vec<ProbeComparison>,
}

/// A run with what it is read against.
pub struct RunContext {
    pub run: Run,
    pub cycle: Cycle,
    pub container: Container,
    pub dryer: Option<Dryer>,
    pub formulation: Option<Formulation>,
    pub derived: Option<Derived>,
    pub resistance: Option<DryLayerResistance>,
    /// The probed formulation in the run's container and fill, for the model.
    pub base: Option<DryingBase>,
    pub series: Option<RunSeries>,
    pub reading: Option<Reading>,
    /// Chamber pressure of primary drying: the run's own, else the cycle's, mTorr.
    pub pressure_mtorr: f64,
    pub prediction: Option<Result<Prediction, String>>,
}

/// Loads a run and reads it against its formulation's limit and the model.
pub async fn load_context(store: &Store, id: i64, margin_c: f64) -> Result<RunContext, AppError> {
    let mut ctx = load_reading(store, id, margin_c).await?;
    ctx.prediction = predict(&ctx);
    Ok(ctx)
}

/// Loads a run and reads its series, without rerunning the model for it.
pub async fn load_reading(store: &Store, id: i64, margin_c: f64) -> Result<RunContext, AppError> {
    let run = store.get_run(id).await?;
    let cycle = store.get_cycle(run.cycle_id).await?;
    let container = store.get_container(run.container_id).await?;
    let dryer = match run.dryer_id {
        Some(d) => Some(store.get_dryer(d).await?),
        None => None,
    };
    let formulation = match run.probed_formulation_id {
        Some(f) => Some(store.get_formulation(f).await?),
        None => None,
    };
    let (derived, resistance, base) = match &formulation {
        Some(f) => {
            let basis = team_basis(store, margin_c).await?;
            let measurements = basis.usable(&store.measurements_of(f.id).await?);
            let materials = store.list_materials().await?;
            let derived = derive(f, &measurements, &materials, basis.margin_c);
            let resistance = resistance_of(store, f).await?;
            let base = drying_base(
                f,
                &materials,
                &container,
                run.fill_volume_ml,
                resistance.resistance,
            );
            (Some(derived), Some(resistance), Some(base))
        }
        None => (None, None, None),
    };
    let series = store.run_series(id).await?.map(|s| science_series(&s));
    let limit = derived.as_ref().and_then(Derived::max_product_temp_c);
    let reading = series.as_ref().map(|s| read(s, limit));
    let pressure_mtorr = run
        .chamber_pressure_mtorr
        .unwrap_or(cycle.program.primary.chamber_pressure_mtorr);
    Ok(RunContext {
        run,
        cycle,
        container,
        dryer,
        formulation,
        derived,
        resistance,
        base,
        series,
        reading,
        pressure_mtorr,
        prediction: None,
    })
}

/// The model rerun for the run's load: the cycle as run (at the run's pressure), the
/// probed formulation, the container's and dryer's current values.
fn predict(ctx: &RunContext) -> Option<Result<Prediction, String>> {
    if ctx.run.kind == crate::domain::runs::RunKind::Gravimetric {
        return Some(Err(
            "a gravimetric test holds its own shelf temperature and stops while ice is left, \
             so it is not read against the cycle's prediction"
                .into(),
        ));
    }
    let (base, derived, resistance, formulation) = (
        ctx.base.as_ref()?,
        ctx.derived.as_ref()?,
        ctx.resistance.as_ref()?,
        ctx.formulation.as_ref()?,
    );
    let reading = ctx.reading.as_ref()?;
    let series = ctx.series.as_ref()?;
    let Some(offset_h) = reading.primary_start_h else {
        return Some(Err(
            "no primary drying was found in the record, so the prediction cannot be placed on \
             its time axis"
                .into(),
        ));
    };
    let mut program = ctx.cycle.program.clone();
    program.primary.chamber_pressure_mtorr = ctx.pressure_mtorr;
    let load = Load {
        dryer: ctx.dryer.as_ref().map(Dryer::science),
        vial_count: ctx.run.vial_count.map(|n| n as f64),
        edge_vial_share: None,
        kv_cv: None,
    };
    let assessed = match assess_cycle(
        &program,
        &facts(derived),
        base,
        &load,
        &VerdictOptions::default(),
    ) {
        Ok(a) => a,
        Err(e) => return Some(Err(format!("{}: {}", e.field, e.message))),
    };
    let Some(batch) = assessed.batch else {
        let why = assessed
            .stop
            .map(|s| s.to_string())
            .unwrap_or_else(|| "the model could not dry the load".into());
        return Some(Err(why));
    };
    let comparisons = series
        .probes
        .iter()
        .filter_map(|probe| {
            let class = if probe.position == ProbePosition::Edge {
                VialClass::Edge
            } else {
                VialClass::Centre
            };
            let c = batch.class(class)?;
            let t: Vec<f64> = c.series.iter().map(|p| p.time_h + offset_h).collect();
            let y: Vec<f64> = c.series.iter().map(|p| p.bottom_temp_c).collect();
            // Compare while the class still has ice: afterwards the model stops.
            let until = reading
                .arrivals
                .iter()
                .find(|a| a.label == probe.label)
                .and_then(|a| a.time_h)
                .unwrap_or(f64::INFINITY)
                .min(offset_h + c.drying_time_h)
                .min(
                    reading
                        .measured_end
                        .as_ref()
                        .map_or(f64::INFINITY, |m| m.end_h),
                );
            compare_probe(probe, &series.time_h, &t, &y, offset_h, until)
        })
        .collect();
    let end_error_h = reading
        .measured_end
        .as_ref()
        .map(|m| offset_h + batch.last_dry_h - m.end_h);
    let kv_words = if ctx.container.typical_values {
        "typical values"
    } else {
        "the team's own"
    };
    let rp_words = if resistance.measured {
        "measured"
    } else {
        "the default for its solids"
    };
    let edge = ctx
        .dryer
        .as_ref()
        .map(|d| format!("; edge factor {:.2} ({})", d.edge_heat_factor, d.name))
        .unwrap_or_default();
    Some(Ok(Prediction {
        basis: format!(
            "Kv of {} ({kv_words}, version {}); Rp of {} ({rp_words}){edge}",
            ctx.container.name, ctx.container.version, formulation.code
        ),
        basis_key: format!(
            "run v{}; container {} v{}; rp {} v{} {}; dryer {}",
            ctx.run.version,
            ctx.container.id,
            ctx.container.version,
            formulation.id,
            resistance.version,
            resistance.measured,
            ctx.dryer
                .as_ref()
                .map(|d| format!("{} v{}", d.id, d.version))
                .unwrap_or_else(|| "none".into()),
        ),
        offset_h,
        batch,
        comparisons,
        end_error_h,
    }))
}
