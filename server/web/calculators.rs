//! Calculators: try a mixture estimate, a residual-moisture limit and a Gordon–Taylor fit
//! of the team's own data without saving anything (only the fitted k can be kept, on
//! purpose, as an in-house material property).

use super::extract::{Form, Query};
use crate::auth::Actor;
use askama::Template;
use axum::extract::State;
use axum::response::Response;
use axum::routing::{get, post};
use axum::Router;
use glasspoint_science::cake::{cake_moisture_limit, cake_tg_curve, CakeMoistureLimitInput};
use glasspoint_science::fit::{
    fit_gordon_taylor, gordon_taylor_curve_c, FitPoint, GordonTaylorFit, GordonTaylorFitInput,
};
use glasspoint_science::mixture::{binary_sweep, mixture_tg, MixtureComponent, MixtureMethod};
use serde::Deserialize;

use super::{fmt, render, see_other, svg};
use crate::charts::{render_line_chart, LineChart, RefLine, Series, SeriesStyle};
use crate::domain::fields::optional_number;
use crate::domain::*;
use crate::{AppError, AppState};

pub fn router() -> Router<AppState> {
    Router::new()
        .route("/calculators", get(page))
        .route("/calculators/mixture.svg", get(mixture_svg))
        .route("/calculators/cake.svg", get(cake_svg))
        .route("/calculators/fit.svg", get(fit_svg))
        .route("/calculators/fit/save", post(save_fit))
}

/// Rows the mixture form offers.
pub const MIXTURE_ROWS: usize = 4;

const CAUTION: &str = "Estimates support the judgement of qualified people; confirm them by measurement before they set a limit.";

/// Everything the three calculators read from the query string (all optional).
#[derive(Debug, Default, Clone, Deserialize, serde::Serialize)]
#[serde(default)]
pub struct CalcQuery {
    pub mode: String,
    pub method: String,
    pub r0_material: String,
    pub r0_fraction: String,
    pub r0_tg: String,
    pub r0_k: String,
    pub r0_dcp: String,
    pub r1_material: String,
    pub r1_fraction: String,
    pub r1_tg: String,
    pub r1_k: String,
    pub r1_dcp: String,
    pub r2_material: String,
    pub r2_fraction: String,
    pub r2_tg: String,
    pub r2_k: String,
    pub r2_dcp: String,
    pub r3_material: String,
    pub r3_fraction: String,
    pub r3_tg: String,
    pub r3_k: String,
    pub r3_dcp: String,
    pub cake_material: String,
    pub solids_tg_c: String,
    pub cake_k: String,
    pub storage_temp_c: String,
    pub margin_c: String,
    pub water_tg_c: String,
    pub fit_a: String,
    pub fit_b: String,
}

/// One mixture row as typed.
#[derive(Debug, Default, Clone)]
pub struct RowInput {
    pub material: String,
    pub fraction: String,
    pub tg: String,
    pub k: String,
    pub dcp: String,
}

impl CalcQuery {
    pub fn rows(&self) -> [RowInput; MIXTURE_ROWS] {
        let r = |m: &str, f: &str, t: &str, k: &str, d: &str| RowInput {
            material: m.into(),
            fraction: f.into(),
            tg: t.into(),
            k: k.into(),
            dcp: d.into(),
        };
        [
            r(
                &self.r0_material,
                &self.r0_fraction,
                &self.r0_tg,
                &self.r0_k,
                &self.r0_dcp,
            ),
            r(
                &self.r1_material,
                &self.r1_fraction,
                &self.r1_tg,
                &self.r1_k,
                &self.r1_dcp,
            ),
            r(
                &self.r2_material,
                &self.r2_fraction,
                &self.r2_tg,
                &self.r2_k,
                &self.r2_dcp,
            ),
            r(
                &self.r3_material,
                &self.r3_fraction,
                &self.r3_tg,
                &self.r3_k,
                &self.r3_dcp,
            ),
        ]
    }

    fn frozen_mode(&self) -> bool {
        self.mode != "tg"
    }

    fn method(&self) -> MixtureMethod {
        match self.method.as_str() {
            "gordon-taylor" => MixtureMethod::GordonTaylor,
            "couchman-karasz" => MixtureMethod::CouchmanKarasz,
            _ => MixtureMethod::Fox,
        }
    }

    fn asked_mixture(&self) -> bool {
        self.rows().iter().any(|r| !r.fraction.trim().is_empty())
    }

    fn asked_cake(&self) -> bool {
        !self.storage_temp_c.trim().is_empty()
    }

    fn asked_fit(&self) -> bool {
        !self.fit_a.trim().is_empty() && !self.fit_b.trim().is_empty()
    }
}

/// The mixture rows as the science reads them, with library values filling blanks, and
/// the material ids chosen (for overlaying the team's measured points).
fn mixture_components(
    q: &CalcQuery,
    materials: &[Material],
    e: &mut FieldErrors,
) -> Vec<(MixtureComponent, Option<i64>, usize)> {
    let frozen = q.frozen_mode();
    let mut out = Vec::new();
    for (i, row) in q.rows().iter().enumerate() {
        if row.fraction.trim().is_empty()
            && row.tg.trim().is_empty()
            && row.material.trim().is_empty()
        {
            continue;
        }
        let material = row
            .material
            .trim()
            .parse::<i64>()
            .ok()
            .and_then(|id| materials.iter().find(|m| m.id == id));
        let f = |s: &str| format!("r{i}_{s}");
        let fraction = optional_number(e, &f("fraction"), &row.fraction);
        if fraction.is_none() && !e.has(&f("fraction")) {
            e.add(
                f("fraction"),
                "give this component's share (any positive amounts; they are normalised)",
            );
        }
        let typed_tg = optional_number(e, &f("tg"), &row.tg);
        let library_tg = material.and_then(|m| {
            m.value(if frozen {
                PropertyKind::TgPrime
            } else {
                PropertyKind::Tg
            })
        });
        let tg = typed_tg.or(library_tg);
        if tg.is_none() && !e.has(&f("tg")) {
            e.add(
                f("tg"),
                if material.is_some() {
                    "the library has no value for this material: type one"
                } else {
                    "choose a material or type its Tg"
                },
            );
        }
        let k = optional_number(e, &f("k"), &row.k).or_else(|| {
            if frozen {
                material.and_then(|m| m.value(PropertyKind::TgPrimeBlendK))
            } else {
                None
            }
        });
        let dcp = optional_number(e, &f("dcp"), &row.dcp)
            .or_else(|| material.and_then(|m| m.value(PropertyKind::DeltaCp)));
        if let (Some(w), Some(tg)) = (fraction, tg) {
            out.push((
                MixtureComponent {
                    name: material
                        .map(|m| m.name.clone())
                        .unwrap_or_else(|| format!("component {}", i + 1)),
                    mass_fraction: w,
                    tg_c: tg,
                    k,
                    delta_cp_j_gk: dcp,
                },
                material.map(|m| m.id),
                i,
            ));
        }
    }
    out
}

/// A science complaint about `components[n].x`, put on the form row it came from.
fn on_row(
    e: glasspoint_science::InputError,
    rows: &[(MixtureComponent, Option<i64>, usize)],
) -> FieldError {
    let mapped = e.field.strip_prefix("components[").and_then(|rest| {
        let (n, field) = rest.split_once("].")?;
        let row = rows.get(n.parse::<usize>().ok()?)?.2;
        let short = match field {
            "mass_fraction" => "fraction",
            "tg_c" => "tg",
            "delta_cp_j_gk" => "dcp",
            other => other,
        };
        Some(format!("r{row}_{short}"))
    });
    FieldError::new(mapped.unwrap_or(e.field), e.message)
}

/// The team's formulations whose amorphous solids are the two materials, with their mean
/// measured Tg′: (share of `b` in the pair, Tg′, code, measurement ids).
pub async fn pair_points(
    state: &AppState,
    a: i64,
    b: i64,
) -> Result<Vec<(f64, f64, String, Vec<i64>)>, AppError> {
    let page = state
        .store
        .search_formulations(&Default::default(), Default::default(), 1, 200)
        .await?;
    let mut points = Vec::new();
    for s in page.items {
        let f = state.store.get_formulation(s.id).await?;
        // Components other than the pair may be present only as traces (< 1 % of solids).
        let others: f64 = f
            .components
            .iter()
            .filter(|c| c.material_id != a && c.material_id != b)
            .map(|c| c.solid_fraction)
            .sum();
        let wa: f64 = f
            .components
            .iter()
            .filter(|c| c.material_id == a)
            .map(|c| c.solid_fraction)
            .sum();
        let wb: f64 = f
            .components
            .iter()
            .filter(|c| c.material_id == b)
            .map(|c| c.solid_fraction)
            .sum();
        if others >= 0.01 || wa + wb <= 0.0 {
            continue;
        }
        let ms: Vec<Measurement> = state
            .store
            .measurements_of(f.id)
            .await?
            .into_iter()
            .filter(|m| m.kind == MeasurementKind::TgPrime)
            .collect();
        if let Some(mean) = mean_of(&ms, MeasurementKind::TgPrime) {
            points.push((
                wb / (wa + wb),
                mean,
                f.code.clone(),
                ms.iter().map(|m| m.id).collect(),
            ));
        }
    }
    points.sort_by(|x, y| x.0.total_cmp(&y.0));
    Ok(points)
}

/// The fit of the pair: end members from the team's pure formulations, else the library.
struct FitOutcome {
    a: Material,
    b: Material,
    tg_a: f64,
    tg_b: f64,
    tg_a_basis: String,
    tg_b_basis: String,
    points: Vec<(f64, f64, String, Vec<i64>)>,
    fit: GordonTaylorFit,
}

async fn run_fit(state: &AppState, q: &CalcQuery) -> Result<FitOutcome, FieldError> {
    let id = |s: &str, field: &str| {
        s.trim()
            .parse::<i64>()
            .map_err(|_| FieldError::new(field, "choose a material"))
    };
    let (a_id, b_id) = (id(&q.fit_a, "fit_a")?, id(&q.fit_b, "fit_b")?);
    if a_id == b_id {
        return Err(FieldError::new("fit_b", "choose two different materials"));
    }
    let get = |id: i64, field: &'static str| async move {
        state
            .store
            .get_material(id)
            .await
            .map_err(|_| FieldError::new(field, "unknown material"))
    };
    let a = get(a_id, "fit_a").await?;
    let b = get(b_id, "fit_b").await?;
    let points = pair_points(state, a_id, b_id)
        .await
        .map_err(|_| FieldError::new("fit_a", "the team's data could not be read"))?;
    let end = |w: f64, m: &Material, field: &str| -> Result<(f64, String), FieldError> {
        if let Some(p) = points.iter().find(|p| (p.0 - w).abs() < 1e-9) {
            return Ok((p.1, format!("measured on {}", p.2)));
        }
        m.value(PropertyKind::TgPrime)
            .map(|v| (v, "library value".to_string()))
            .ok_or_else(|| {
                FieldError::new(
                    field,
                    format!(
                        "{} has no measured or library Tg′ to anchor the fit",
                        m.name
                    ),
                )
            })
    };
    let (tg_a, tg_a_basis) = end(0.0, &a, "fit_a")?;
    let (tg_b, tg_b_basis) = end(1.0, &b, "fit_b")?;
    let blends: Vec<FitPoint> = points
        .iter()
        .filter(|p| p.0 > 1e-9 && p.0 < 1.0 - 1e-9)
        .map(|p| FitPoint {
            w2: p.0,
            tg_c: p.1,
            label: Some(p.2.clone()),
        })
        .collect();
    if blends.len() < 2 {
        return Err(FieldError::new(
            "fit_b",
            format!(
                "the fit needs at least two measured blends of {} and {}; the team has {}",
                a.name,
                b.name,
                blends.len()
            ),
        ));
    }
    let fit = fit_gordon_taylor(&GordonTaylorFitInput {
        tg1_c: tg_a,
        tg2_c: tg_b,
        points: blends,
    })
    .map_err(FieldError::from)?;
    Ok(FitOutcome {
        a,
        b,
        tg_a,
        tg_b,
        tg_a_basis,
        tg_b_basis,
        points,
        fit,
    })
}

#[derive(Template)]
#[template(path = "calculators.html")]
struct Page {
    q: CalcQuery,
    rows: [RowInput; MIXTURE_ROWS],
    materials: Vec<(String, String)>,
    errors: FieldErrors,
    mixture_lines: Vec<String>,
    mixture_chart: bool,
    cake_lines: Vec<String>,
    fit_lines: Vec<String>,
    fit_residuals: Vec<(String, String, String, String, String)>,
    fit_save: Option<(i64, i64)>,
    query: String,
    caution: &'static str,
}

async fn page(
    State(state): State<AppState>,
    Query(q): Query<CalcQuery>,
) -> Result<Response, AppError> {
    let materials = state.store.list_materials().await?;
    let mut errors = FieldErrors::default();

    let mut mixture_lines = Vec::new();
    let mut mixture_chart = false;
    if q.asked_mixture() {
        let comps = mixture_components(&q, &materials, &mut errors);
        if errors.is_empty() {
            let list: Vec<MixtureComponent> = comps.iter().map(|c| c.0.clone()).collect();
            match mixture_tg(q.method(), &list) {
                Ok(r) => {
                    mixture_lines.push(format!(
                        "{} of the mixture: {} °C ({} K) by {}.",
                        if q.frozen_mode() { "Tg′" } else { "Tg" },
                        fmt::num1(r.tg_c),
                        fmt::num1(r.tg_k),
                        r.equation
                    ));
                    if r.normalised {
                        mixture_lines.push(format!(
                            "The shares added up to {}; they were scaled to 1.",
                            fmt::trim(r.fraction_sum)
                        ));
                    }
                    for c in &r.fractions {
                        mixture_lines.push(format!(
                            "{}: {} of the mixture",
                            c.name,
                            fmt::percent(c.mass_fraction)
                        ));
                    }
                    mixture_chart = list.len() >= 2;
                }
                Err(e) => errors.push(on_row(e, &comps)),
            }
        }
    }

    let mut cake_lines = Vec::new();
    if q.asked_cake() {
        match cake_input(&q, &materials) {
            Ok(input) => match cake_moisture_limit(&input) {
                Ok(r) => {
                    cake_lines.push(format!(
                        "Keep residual water below {} % (w/w): the cake Tg is then at least {} °C, {} °C above storage at {} °C.",
                        fmt::num2(r.max_water_percent),
                        fmt::num1(r.tg_at_limit_c),
                        fmt::trim(input.margin_c),
                        fmt::trim(input.storage_temp_c)
                    ));
                    cake_lines.extend(r.reasoning.iter().cloned());
                }
                Err(e) => errors.push(cake_field(e)),
            },
            Err(e) => errors.push(e),
        }
    }

    let mut fit_lines = Vec::new();
    let mut fit_residuals = Vec::new();
    let mut fit_save = None;
    if q.asked_fit() {
        match run_fit(&state, &q).await {
            Ok(o) => {
                fit_lines.push(format!(
                    "Gordon–Taylor k of {} relative to {}: {}{} from {} blends (RMS residual {} °C; Fox gives {} °C).",
                    o.b.name,
                    o.a.name,
                    fmt::num2(o.fit.k),
                    o.fit.k_standard_error.map(|se| format!(" ± {}", fmt::num2(se))).unwrap_or_default(),
                    o.fit.residuals.len(),
                    fmt::num2(o.fit.rms_c),
                    fmt::num2(o.fit.fox_rms_c)
                ));
                fit_lines.push(format!(
                    "End members: {} Tg′ {} °C ({}); {} Tg′ {} °C ({}).",
                    o.a.name,
                    fmt::num1(o.tg_a),
                    o.tg_a_basis,
                    o.b.name,
                    fmt::num1(o.tg_b),
                    o.tg_b_basis
                ));
                fit_lines.extend(o.fit.reasoning.iter().cloned());
                fit_residuals = o
                    .fit
                    .residuals
                    .iter()
                    .map(|r| {
                        (
                            r.label.clone().unwrap_or_default(),
                            fmt::percent(r.w2),
                            fmt::num1(r.measured_tg_c),
                            fmt::num2(r.residual_c),
                            fmt::num2(r.fox_residual_c),
                        )
                    })
                    .collect();
                fit_save = Some((o.a.id, o.b.id));
            }
            Err(e) => errors.push(e),
        }
    }

    Ok(render(Page {
        rows: q.rows(),
        materials: materials
            .iter()
            .map(|m| (m.id.to_string(), m.name.clone()))
            .collect(),
        errors,
        mixture_lines,
        mixture_chart,
        cake_lines,
        fit_lines,
        fit_residuals,
        fit_save,
        query: serde_urlencoded::to_string(&q).unwrap_or_default(),
        q,
        caution: CAUTION,
    }))
}

fn cake_input(q: &CalcQuery, materials: &[Material]) -> Result<CakeMoistureLimitInput, FieldError> {
    let mut e = FieldErrors::default();
    let material = q
        .cake_material
        .trim()
        .parse::<i64>()
        .ok()
        .and_then(|id| materials.iter().find(|m| m.id == id));
    let tg = optional_number(&mut e, "solids_tg_c", &q.solids_tg_c)
        .or_else(|| material.and_then(|m| m.value(PropertyKind::Tg)));
    let k = optional_number(&mut e, "cake_k", &q.cake_k)
        .or_else(|| material.and_then(|m| m.value(PropertyKind::GordonTaylorK)));
    let storage = optional_number(&mut e, "storage_temp_c", &q.storage_temp_c);
    let margin = optional_number(&mut e, "margin_c", &q.margin_c).or(Some(20.0));
    let water = optional_number(&mut e, "water_tg_c", &q.water_tg_c);
    if let Some(err) = e.first() {
        return Err(err);
    }
    Ok(CakeMoistureLimitInput {
        solids_tg_c: tg.ok_or_else(|| FieldError::new("solids_tg_c", "give the dry solids' Tg, or choose a material whose library Tg is known"))?,
        k: k.ok_or_else(|| FieldError::new("cake_k", "give the Gordon–Taylor k with water, or choose a material whose library k is known"))?,
        storage_temp_c: storage.ok_or_else(|| FieldError::new("storage_temp_c", "is required"))?,
        margin_c: margin.unwrap_or(20.0),
        water_tg_c: water,
    })
}

fn cake_field(e: glasspoint_science::InputError) -> FieldError {
    let field = if e.field == "k" {
        "cake_k".to_string()
    } else {
        e.field
    };
    FieldError::new(field, e.message)
}

async fn mixture_svg(
    State(state): State<AppState>,
    Query(q): Query<CalcQuery>,
) -> Result<Response, AppError> {
    let materials = state.store.list_materials().await?;
    let mut e = FieldErrors::default();
    let comps = mixture_components(&q, &materials, &mut e);
    if let Some(err) = e.first() {
        return Err(AppError::Input(err));
    }
    let (a, b) = match (comps.first(), comps.get(1)) {
        (Some(a), Some(b)) => (a, b),
        _ => {
            return Err(AppError::input(
                "r1_fraction",
                "the chart sweeps between the first two components: give two",
            ))
        }
    };
    let sweep = binary_sweep(q.method(), &a.0, &b.0, 100)
        .map_err(|err| AppError::Input(on_row(err, &comps)))?;
    let mut series = vec![Series {
        name: format!(
            "{} model",
            match q.method() {
                MixtureMethod::Fox => "Fox",
                MixtureMethod::GordonTaylor => "Gordon–Taylor",
                MixtureMethod::CouchmanKarasz => "Couchman–Karasz",
            }
        ),
        points: sweep,
        style: SeriesStyle::Line,
        color: Some(1),
    }];
    if q.frozen_mode() {
        if let (Some(ia), Some(ib)) = (a.1, b.1) {
            let measured: Vec<(f64, f64)> = pair_points(&state, ia, ib)
                .await?
                .into_iter()
                .map(|p| (p.0, p.1))
                .collect();
            if !measured.is_empty() {
                series.push(Series {
                    name: "our measured Tg′".into(),
                    points: measured,
                    style: SeriesStyle::Points,
                    color: Some(5),
                });
            }
        }
    }
    let what = if q.frozen_mode() { "Tg′" } else { "Tg" };
    let chart = LineChart {
        title: format!("{what} of {} and {} blends", a.0.name, b.0.name),
        x_label: format!("share of {} in the pair (solid basis)", b.0.name),
        y_label: format!("{what} (°C)"),
        series,
        x_range: Some((0.0, 1.0)),
        ..LineChart::default()
    };
    Ok(svg(render_line_chart(&chart)))
}

async fn cake_svg(
    State(state): State<AppState>,
    Query(q): Query<CalcQuery>,
) -> Result<Response, AppError> {
    let materials = state.store.list_materials().await?;
    let input = cake_input(&q, &materials).map_err(AppError::Input)?;
    let limit = cake_moisture_limit(&input).map_err(|e| AppError::Input(cake_field(e)))?;
    let top = (limit.max_water_fraction * 2.0).clamp(0.02, 0.3);
    let curve = cake_tg_curve(input.solids_tg_c, input.k, input.water_tg_c, top, 120)
        .map_err(|e| AppError::Input(cake_field(e)))?;
    let chart = LineChart {
        title: "Dried-cake Tg against residual water".into(),
        x_label: "residual water (% w/w)".into(),
        y_label: "cake Tg (°C)".into(),
        series: vec![
            Series {
                name: "Gordon–Taylor with water".into(),
                points: curve.into_iter().map(|(w, t)| (w * 100.0, t)).collect(),
                style: SeriesStyle::Line,
                color: Some(1),
            },
            Series {
                name: "largest water content".into(),
                points: vec![(limit.max_water_percent, limit.tg_at_limit_c)],
                style: SeriesStyle::Points,
                color: Some(5),
            },
        ],
        hlines: vec![
            RefLine {
                label: format!("storage {} °C", fmt::trim(input.storage_temp_c)),
                value: input.storage_temp_c,
                color: Some(0),
            },
            RefLine {
                label: format!("storage + {} °C", fmt::trim(input.margin_c)),
                value: limit.target_tg_c,
                color: Some(2),
            },
        ],
        ..LineChart::default()
    };
    Ok(svg(render_line_chart(&chart)))
}

async fn fit_svg(
    State(state): State<AppState>,
    Query(q): Query<CalcQuery>,
) -> Result<Response, AppError> {
    let o = run_fit(&state, &q).await.map_err(AppError::Input)?;
    let curve = |k: f64| {
        (0..=100)
            .map(|i| {
                let w = i as f64 / 100.0;
                (w, gordon_taylor_curve_c(o.tg_a, o.tg_b, k, w))
            })
            .collect::<Vec<_>>()
    };
    let fox = glasspoint_science::mixture::fox_binary_k;
    let fox_curve = (0..=100)
        .map(|i| {
            let w = i as f64 / 100.0;
            let t = fox(w, o.tg_a + 273.15, o.tg_b + 273.15) - 273.15;
            (w, t)
        })
        .collect();
    let chart = LineChart {
        title: format!("Tg′ of {} and {}: fitted Gordon–Taylor", o.a.name, o.b.name),
        x_label: format!("share of {} in the pair (solid basis)", o.b.name),
        y_label: "Tg′ (°C)".into(),
        series: vec![
            Series {
                name: format!("Gordon–Taylor, k = {}", fmt::num2(o.fit.k)),
                points: curve(o.fit.k),
                style: SeriesStyle::Line,
                color: Some(1),
            },
            Series {
                name: "Fox".into(),
                points: fox_curve,
                style: SeriesStyle::DashedLine,
                color: Some(0),
            },
            Series {
                name: "our measured Tg′".into(),
                points: o.points.iter().map(|p| (p.0, p.1)).collect(),
                style: SeriesStyle::Points,
                color: Some(5),
            },
        ],
        x_range: Some((0.0, 1.0)),
        ..LineChart::default()
    };
    Ok(svg(render_line_chart(&chart)))
}

#[derive(Deserialize)]
struct SaveFit {
    fit_a: String,
    fit_b: String,
}

/// Keeps the fitted k as an in-house property of the second material, citing the fit and
/// linking the measurements it came from.
async fn save_fit(
    State(state): State<AppState>,
    actor: Actor,
    Form(f): Form<SaveFit>,
) -> Result<Response, AppError> {
    let q = CalcQuery {
        fit_a: f.fit_a,
        fit_b: f.fit_b,
        ..Default::default()
    };
    let o = run_fit(&state, &q).await.map_err(AppError::Input)?;
    let ids: Vec<i64> = o.points.iter().flat_map(|p| p.3.iter().copied()).collect();
    let citation = format!(
        "In-house Gordon–Taylor fit of Tg′ in blends with {} (k relative to {} = 1): k = {}{}, {} blends, RMS {} °C, fitted {}",
        o.a.name,
        o.a.name,
        fmt::num2(o.fit.k),
        o.fit.k_standard_error.map(|se| format!(" ± {}", fmt::num2(se))).unwrap_or_default(),
        o.fit.residuals.len(),
        fmt::num2(o.fit.rms_c),
        crate::domain::fields::format_date(time::OffsetDateTime::now_utc().date())
    );
    state
        .store
        .set_material_property(
            &actor,
            o.b.id,
            &PropertyDraft {
                kind: PropertyKind::TgPrimeBlendK,
                value: o.fit.k,
                convention: None,
                source_kind: SourceKind::InHouse,
                citation,
                measurement_ids: ids,
            },
        )
        .await?;
    Ok(see_other(&format!("/materials/{}", o.b.id)))
}
