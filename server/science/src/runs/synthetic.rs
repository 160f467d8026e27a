//! Runs made by the model: for tests, and for the demo. Every number here is invented
//! except what the model itself computes; the noise comes from a small seeded generator,
//! so a spec always gives the same run.
//!
//! A run: the shelf ramps from `freezing.start_c` to `freezing.hold_c` and holds; an
//! optional annealing hold follows (ramp up, hold, ramp back, hold again); the vacuum is
//! pulled and the shelf ramps to the primary-drying temperature, where it stays until the
//! slowest vials are dry plus a soak; then it ramps to the secondary hold. Product probes
//! follow the shelf with a first-order lag ([`PROBE_LAG_H`]) while there is no sublimation
//! model to follow (freezing, and after their vial's ice is gone) and read the model's
//! bottom temperature of their kind of vial (centre, or edge with Kv × the edge factor)
//! during primary drying. The manometer holds the set pressure after the vacuum; the Pirani
//! follows [`crate::gauge`] as the classes of the batch run dry; the condenser cools to
//! about −75 °C in the hour before the vacuum.

use serde::{Deserialize, Serialize};

use super::series::{Probe, ProbePosition, RunSeries};
use super::{interpolate, secondary::MoistureSample};
use crate::batch::{simulate_batch, BatchSpec, DEFAULT_EDGE_SHARE};
use crate::dryer::edge_heat_factor;
use crate::drying::{
    chamber_pressure_pa, run_recording, Conditions, DryingBase, DryingError, Product, Resolution,
    SeriesPoint, ShelfPlan,
};
use crate::error::{finite, non_negative, positive, InputError};
use crate::gauge::{pirani_trace, DEFAULT_WATER_FRACTION_AT_PEAK};
use crate::units::c_to_k;

/// Time constant of a probe and its vial following the shelf without sublimation, h
/// (invented, for the demo).
pub const PROBE_LAG_H: f64 = 0.25;
/// Atmospheric pressure, mTorr (760 Torr).
pub const ATMOSPHERE_MTORR: f64 = 760_000.0;
/// The condenser's working temperature, °C (typical of lab dryers; demo value).
pub const CONDENSER_C: f64 = -75.0;
const ROOM_C: f64 = 20.0;
/// Most rows a synthetic run may have.
const MAX_ROWS: usize = 200_000;
/// Fine steps, so that the series read back from the model is exact to ~10⁻⁷.
const FINE: Resolution = Resolution {
    ice_steps: 2000,
    max_shelf_change_k: 0.25,
};

/// Seeded Gaussian noise: xorshift64* and Box–Muller.
#[derive(Debug, Clone)]
pub struct Noise(u64);

impl Noise {
    pub fn new(seed: u64) -> Self {
        // xorshift never leaves zero.
        Self(if seed == 0 {
            0x9E37_79B9_7F4A_7C15
        } else {
            seed
        })
    }

    fn uniform(&mut self) -> f64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        let x = self.0.wrapping_mul(0x2545_F491_4F6C_DD1D);
        ((x >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }

    /// A standard normal draw.
    pub fn gauss(&mut self) -> f64 {
        let (u, v) = (self.uniform(), self.uniform());
        (-2.0 * u.ln()).sqrt() * (std::f64::consts::TAU * v).cos()
    }
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FreezingSpec {
    pub start_c: f64,
    pub ramp_c_per_min: f64,
    pub hold_c: f64,
    pub hold_h: f64,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AnnealingSpec {
    pub temp_c: f64,
    pub ramp_c_per_min: f64,
    pub hold_h: f64,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ProbeSpec {
    pub label: String,
    pub position: ProbePosition,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SyntheticRunSpec {
    /// The product in its vial; Kv and Rp of centre vials.
    pub base: DryingBase,
    /// Edge vials' Kv over centre vials'.
    pub edge_kv_factor: f64,
    pub freezing: FreezingSpec,
    pub annealing: Option<AnnealingSpec>,
    pub primary_shelf_temp_c: f64,
    pub primary_ramp_c_per_min: f64,
    pub chamber_pressure_mtorr: f64,
    /// Time at the primary shelf temperature after the slowest vials are dry, h.
    pub primary_soak_h: f64,
    pub secondary_temp_c: f64,
    pub secondary_ramp_c_per_min: f64,
    pub secondary_hold_h: f64,
    pub probes: Vec<ProbeSpec>,
    pub sample_interval_min: f64,
    /// Standard deviation of probe and condenser readings, °C.
    pub noise_c: f64,
    /// Standard deviation of gauge readings as a share of the reading.
    pub pressure_noise_share: f64,
    pub seed: u64,
}

impl SyntheticRunSpec {
    /// A plain demo run of `base`: freeze to −45 °C, primary at −20 °C and 100 mTorr,
    /// secondary at 40 °C; two centre probes and one edge probe (invented numbers).
    pub fn demo(base: DryingBase) -> Self {
        let probe = |label: &str, position| ProbeSpec {
            label: label.to_string(),
            position,
        };
        Self {
            base,
            edge_kv_factor: 1.3,
            freezing: FreezingSpec {
                start_c: 5.0,
                ramp_c_per_min: 1.0,
                hold_c: -45.0,
                hold_h: 2.0,
            },
            annealing: None,
            primary_shelf_temp_c: -20.0,
            primary_ramp_c_per_min: 0.5,
            chamber_pressure_mtorr: 100.0,
            primary_soak_h: 2.0,
            secondary_temp_c: 40.0,
            secondary_ramp_c_per_min: 0.2,
            secondary_hold_h: 4.0,
            probes: vec![
                probe("C1", ProbePosition::Centre),
                probe("C2", ProbePosition::Centre),
                probe("E1", ProbePosition::Edge),
            ],
            sample_interval_min: 2.0,
            noise_c: 0.2,
            pressure_noise_share: 0.005,
            seed: 1,
        }
    }
}

/// A synthetic run and the truths behind it (times in the run's clock, h).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SyntheticRun {
    pub series: RunSeries,
    /// When the vacuum is pulled (the start of primary drying).
    pub vacuum_h: f64,
    /// Annealing from leaving the freezing hold to the start of the re-cool.
    pub annealing_h: Option<(f64, f64)>,
    /// When centre vials run out of ice.
    pub predicted_end_h: f64,
    /// When edge vials run out of ice.
    pub edge_end_h: f64,
    /// When the shelf starts its ramp to the secondary hold.
    pub secondary_ramp_start_h: f64,
    /// The model's centre and edge vials (time from the vacuum).
    pub centre: Vec<SeriesPoint>,
    pub edge: Vec<SeriesPoint>,
}

/// The shelf as corners (time h, °C), read linearly between them.
struct Shelf(Vec<(f64, f64)>);

impl Shelf {
    fn go(&mut self, to_c: f64, rate_c_per_min: f64, hold_h: f64) {
        let (t, from) = self.0.last().copied().unwrap_or((0.0, to_c));
        let ramp_h = (to_c - from).abs() / rate_c_per_min / 60.0;
        if ramp_h > 0.0 {
            self.0.push((t + ramp_h, to_c));
        }
        if hold_h > 0.0 {
            self.0.push((t + ramp_h + hold_h, to_c));
        }
    }

    fn end_h(&self) -> f64 {
        self.0.last().map_or(0.0, |c| c.0)
    }

    fn at(&self, t: f64) -> f64 {
        let (ts, vs): (Vec<f64>, Vec<f64>) = self.0.iter().copied().unzip();
        interpolate(&ts, &vs, t)
            .or_else(|| vs.last().copied())
            .unwrap_or(0.0)
    }
}

fn rate(field: &str, v: f64) -> Result<f64, InputError> {
    positive(field, v)
}

/// Make a run from `spec` (module docs).
pub fn synthesize_run(spec: &SyntheticRunSpec) -> Result<SyntheticRun, InputError> {
    let product = Product::new(&spec.base)?;
    let pc_pa = chamber_pressure_pa("chamber_pressure_mtorr", spec.chamber_pressure_mtorr)?;
    let edge_factor = edge_heat_factor("edge_kv_factor", spec.edge_kv_factor)?;
    let f = &spec.freezing;
    finite("freezing.start_c", f.start_c)?;
    let hold_c = finite("freezing.hold_c", f.hold_c)?;
    rate("freezing.ramp_c_per_min", f.ramp_c_per_min)?;
    non_negative("freezing.hold_h", f.hold_h)?;
    finite("primary_shelf_temp_c", spec.primary_shelf_temp_c)?;
    rate("primary_ramp_c_per_min", spec.primary_ramp_c_per_min)?;
    non_negative("primary_soak_h", spec.primary_soak_h)?;
    finite("secondary_temp_c", spec.secondary_temp_c)?;
    rate("secondary_ramp_c_per_min", spec.secondary_ramp_c_per_min)?;
    non_negative("secondary_hold_h", spec.secondary_hold_h)?;
    let interval_h = positive("sample_interval_min", spec.sample_interval_min)? / 60.0;
    let noise_c = non_negative("noise_c", spec.noise_c)?;
    let pressure_noise = non_negative("pressure_noise_share", spec.pressure_noise_share)?;

    let mut shelf = Shelf(vec![(0.0, f.start_c)]);
    shelf.go(hold_c, f.ramp_c_per_min, f.hold_h);
    let mut annealing_h = None;
    if let Some(a) = &spec.annealing {
        let temp = finite("annealing.temp_c", a.temp_c)?;
        if temp <= hold_c || temp >= 0.0 {
            return Err(InputError::new(
                "annealing.temp_c",
                format!("an annealing hold lies between the freezing hold and 0 °C (got {temp})"),
            ));
        }
        rate("annealing.ramp_c_per_min", a.ramp_c_per_min)?;
        non_negative("annealing.hold_h", a.hold_h)?;
        let start = shelf.end_h();
        shelf.go(temp, a.ramp_c_per_min, a.hold_h);
        annealing_h = Some((start, shelf.end_h()));
        shelf.go(hold_c, a.ramp_c_per_min, f.hold_h);
    }
    let vacuum_h = shelf.end_h();

    // Primary drying of centre and edge vials, from the freezing hold.
    let plan = ShelfPlan::ramp_then_hold(
        hold_c,
        spec.primary_ramp_c_per_min,
        spec.primary_shelf_temp_c,
    );
    let conditions = Conditions::new(&product, plan, pc_pa, None);
    let edge_product = product.with_factors(edge_factor, 1.0);
    let stop = |stop| -> InputError {
        DryingError::Stop {
            stop,
            shelf_field: "primary_shelf_temp_c",
        }
        .into()
    };
    let (centre_summary, centre) = run_recording(&product, &conditions, FINE).map_err(stop)?;
    let (edge_summary, edge) =
        run_recording(&edge_product, &conditions.for_product(&edge_product), FINE).map_err(stop)?;
    let batch_spec = BatchSpec::new(Some(edge_factor), Some(DEFAULT_EDGE_SHARE), Some(0.0), None)?;
    let batch = simulate_batch(&product, &conditions, &batch_spec)
        .map_err(|e| InputError::new("primary_shelf_temp_c", e.to_string()))?;
    let gauges = pirani_trace(
        &batch,
        spec.chamber_pressure_mtorr,
        DEFAULT_WATER_FRACTION_AT_PEAK,
    )?;
    let (gauge_t, gauge_p): (Vec<f64>, Vec<f64>) =
        gauges.iter().map(|g| (g.time_h, g.pirani_mtorr)).unzip();

    let centre_dry = centre_summary.drying_time_h;
    let edge_dry = edge_summary.drying_time_h;
    let ramp_to_primary_h =
        (spec.primary_shelf_temp_c - hold_c).abs() / spec.primary_ramp_c_per_min / 60.0;
    let primary_hold =
        (centre_dry.max(edge_dry) + spec.primary_soak_h - ramp_to_primary_h).max(0.0);
    shelf.go(
        spec.primary_shelf_temp_c,
        spec.primary_ramp_c_per_min,
        primary_hold,
    );
    let secondary_ramp_start_h = shelf.end_h();
    shelf.go(
        spec.secondary_temp_c,
        spec.secondary_ramp_c_per_min,
        spec.secondary_hold_h,
    );
    let end_h = shelf.end_h();

    let rows = (end_h / interval_h).floor() as usize + 1;
    if rows > MAX_ROWS {
        return Err(InputError::new(
            "sample_interval_min",
            format!("would make {rows} rows; at most {MAX_ROWS} are made"),
        ));
    }
    let time_h: Vec<f64> = (0..rows).map(|k| k as f64 * interval_h).collect();
    let shelf_c: Vec<f64> = time_h.iter().map(|&t| shelf.at(t)).collect();
    let mut noise = Noise::new(spec.seed);

    let mut probes = Vec::with_capacity(spec.probes.len());
    for (i, p) in spec.probes.iter().enumerate() {
        if p.label.trim().is_empty() {
            return Err(InputError::new(
                format!("probes[{i}].label"),
                "needs a name",
            ));
        }
        let vial = if p.position == ProbePosition::Edge {
            &edge
        } else {
            &centre
        };
        let (vt, vb): (Vec<f64>, Vec<f64>) =
            vial.iter().map(|m| (m.time_h, m.bottom_temp_c)).unzip();
        let mut temp = shelf_c.first().copied().unwrap_or(f.start_c);
        let mut previous_t = 0.0;
        let mut readings = Vec::with_capacity(rows);
        for (&t, &s) in time_h.iter().zip(&shelf_c) {
            let model_t = t - vacuum_h;
            temp = match (model_t >= 0.0)
                .then(|| interpolate(&vt, &vb, model_t))
                .flatten()
            {
                Some(bottom) => bottom,
                None => s + (temp - s) * (-(t - previous_t) / PROBE_LAG_H).exp(),
            };
            previous_t = t;
            readings.push(temp + noise_c * noise.gauss());
        }
        probes.push(Probe {
            label: p.label.clone(),
            position: p.position,
            temp_c: readings,
        });
    }
    let mut manometer = Vec::with_capacity(rows);
    let mut pirani = Vec::with_capacity(rows);
    let mut condenser = Vec::with_capacity(rows);
    for &t in &time_h {
        let model_t = t - vacuum_h;
        let (m, p) = if model_t < 0.0 {
            (ATMOSPHERE_MTORR, ATMOSPHERE_MTORR)
        } else {
            let p = interpolate(&gauge_t, &gauge_p, model_t).unwrap_or(spec.chamber_pressure_mtorr);
            (spec.chamber_pressure_mtorr, p)
        };
        manometer.push(m * (1.0 + pressure_noise * noise.gauss()));
        pirani.push(p * (1.0 + pressure_noise * noise.gauss()));
        let cooling = ((t - (vacuum_h - 1.0)) / 1.0).clamp(0.0, 1.0);
        condenser.push(ROOM_C + (CONDENSER_C - ROOM_C) * cooling + noise_c * noise.gauss());
    }
    Ok(SyntheticRun {
        series: RunSeries {
            time_h,
            shelf_c,
            probes,
            manometer_mtorr: Some(manometer),
            pirani_mtorr: Some(pirani),
            condenser_c: Some(condenser),
        },
        vacuum_h,
        annealing_h,
        predicted_end_h: vacuum_h + centre_dry,
        edge_end_h: vacuum_h + edge_dry,
        secondary_ramp_start_h,
        centre,
        edge,
    })
}

/// A gravimetric test made by the model: vials of `base` with Kv × `kv_factor` at a
/// constant shelf temperature and chamber pressure for `duration_h`, logged every 2 min
/// or less; one probe (bottom temperature, plus noise) and the manometer. Also the mass
/// of ice each vial lost, g.
pub fn synthesize_gravimetric_test(
    base: &DryingBase,
    shelf_temp_c: f64,
    chamber_pressure_mtorr: f64,
    duration_h: f64,
    kv_factor: f64,
    noise_c: f64,
    seed: u64,
) -> Result<(RunSeries, f64), InputError> {
    let kv_factor = positive("kv_factor", kv_factor)?;
    let product = Product::new(base)?.with_factors(kv_factor, 1.0);
    let pc_pa = chamber_pressure_pa("chamber_pressure_mtorr", chamber_pressure_mtorr)?;
    let shelf = finite("shelf_temp_c", shelf_temp_c)?;
    let duration = positive("duration_h", duration_h)?;
    let noise_c = non_negative("noise_c", noise_c)?;
    let conditions = Conditions::new(&product, ShelfPlan::constant(shelf), pc_pa, None);
    let (summary, moments) = run_recording(&product, &conditions, FINE).map_err(|stop| {
        InputError::from(DryingError::Stop {
            stop,
            shelf_field: "shelf_temp_c",
        })
    })?;
    if duration >= summary.drying_time_h {
        return Err(InputError::new(
            "duration_h",
            format!(
                "the ice is gone after {:.2} h: a gravimetric test stops while ice is left",
                summary.drying_time_h
            ),
        ));
    }
    let (mt, (bottom, dried)): (Vec<f64>, (Vec<f64>, Vec<f64>)) = moments
        .iter()
        .map(|m| (m.time_h, (m.bottom_temp_c, m.dried_layer_cm)))
        .unzip();
    let steps = ((duration * 30.0).ceil() as usize).max(1);
    let time_h: Vec<f64> = (0..=steps)
        .map(|i| duration * i as f64 / steps as f64)
        .collect();
    let mut noise = Noise::new(seed);
    let probe: Vec<f64> = time_h
        .iter()
        .map(|&t| interpolate(&mt, &bottom, t).unwrap_or(f64::NAN) + noise_c * noise.gauss())
        .collect();
    let dried_cm = interpolate(&mt, &dried, duration).unwrap_or(0.0);
    let mass_g = dried_cm * product.inner_area_cm2() * product.ice_density_g_cm3();
    let n = time_h.len();
    Ok((
        RunSeries {
            time_h,
            shelf_c: vec![shelf; n],
            probes: vec![Probe {
                label: "weighed vial".to_string(),
                position: if kv_factor > 1.0 {
                    ProbePosition::Edge
                } else {
                    ProbePosition::Centre
                },
                temp_c: probe,
            }],
            manometer_mtorr: Some(vec![chamber_pressure_mtorr; n]),
            pirani_mtorr: None,
            condenser_c: None,
        },
        mass_g,
    ))
}

/// First-order desorption with an Arrhenius rate, for demo thief samples.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DesorptionSpec {
    pub initial_water_fraction: f64,
    pub equilibrium_water_fraction: f64,
    /// k at `reference_temp_c`, 1/h.
    pub rate_per_h_at_reference: f64,
    pub reference_temp_c: f64,
    pub activation_energy_kj_mol: f64,
    /// Isothermal holds in order: (shelf °C, hours).
    pub holds: Vec<(f64, f64)>,
    /// Samples per hold, evenly spaced from the hold's start.
    pub samples_per_hold: usize,
    /// Standard deviation of the water fraction read, absolute.
    pub noise: f64,
    pub seed: u64,
}

/// Samples of W(t) = We + (W₀ − We)·exp(−∫k dt) through the holds of `spec`, k = k_ref ·
/// exp(−Ea/R·(1/T − 1/T_ref)) (Pikal, Shah, Roy & Putman 1990, from memory).
pub fn moisture_samples(spec: &DesorptionSpec) -> Vec<MoistureSample> {
    const R: f64 = 8.314_462_618;
    let mut noise = Noise::new(spec.seed);
    let mut out = Vec::with_capacity(spec.holds.len() * spec.samples_per_hold);
    let (mut t0, mut excess) = (
        0.0,
        spec.initial_water_fraction - spec.equilibrium_water_fraction,
    );
    let n = spec.samples_per_hold.max(1);
    for &(temp_c, hold_h) in &spec.holds {
        let k = spec.rate_per_h_at_reference
            * (-spec.activation_energy_kj_mol * 1000.0 / R
                * (1.0 / c_to_k(temp_c) - 1.0 / c_to_k(spec.reference_temp_c)))
            .exp();
        for j in 0..n {
            let dt = hold_h * j as f64 / n as f64;
            out.push(MoistureSample {
                time_h: t0 + dt,
                shelf_temp_c: temp_c,
                water_fraction: spec.equilibrium_water_fraction
                    + excess * (-k * dt).exp()
                    + spec.noise * noise.gauss(),
            });
        }
        excess *= (-k * hold_h).exp();
        t0 += hold_h;
    }
    out
}
