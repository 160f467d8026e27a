//! The load on the link page: its vial classes, the batch as a whole, and the dryer's
//! limits the checks used (or a note that no dryer was named).

use glasspoint_science::batch::{BatchResult, VialClass, DEFAULT_EDGE_SHARE};

use crate::derive::Assessment;
use crate::web::fmt;

/// One class of vials as the page shows it.
pub struct ClassRow {
    pub label: &'static str,
    /// True for edge vials and the nominal centre vials: the two classes a process
    /// engineer compares first.
    pub main: bool,
    pub share: String,
    pub kv_factor: String,
    pub peak_front_c: String,
    pub peak_bottom_c: String,
    pub drying_time_h: String,
    pub peak_rate_g_h: String,
}

fn class_name(c: VialClass) -> &'static str {
    match c {
        VialClass::Centre => "Centre (nominal Kv)",
        VialClass::CentreLowKv => "Centre, low end of the Kv spread",
        VialClass::CentreHighKv => "Centre, high end of the Kv spread",
        VialClass::Edge => "Edge",
    }
}

/// The classes in the order centre, its spread, edge.
pub fn class_rows(b: &BatchResult) -> Vec<ClassRow> {
    let order = [
        VialClass::Centre,
        VialClass::CentreLowKv,
        VialClass::CentreHighKv,
        VialClass::Edge,
    ];
    order
        .iter()
        .filter_map(|k| b.class(*k))
        .map(|c| ClassRow {
            label: class_name(c.class),
            main: matches!(c.class, VialClass::Centre | VialClass::Edge),
            share: fmt::percent(c.share),
            kv_factor: fmt::num2(c.kv_factor),
            peak_front_c: fmt::num1(c.peak_front_temp_c),
            peak_bottom_c: fmt::num1(c.peak_bottom_temp_c),
            drying_time_h: fmt::num1(c.drying_time_h),
            peak_rate_g_h: fmt::num2(c.peak_sublimation_rate_g_h),
        })
        .collect()
}

/// The batch as a whole: first and last vials dry, peak sublimation rates.
pub fn batch_facts(a: &Assessment, b: &BatchResult) -> Vec<(String, String)> {
    let mut rows = vec![
        (
            "First vials dry".to_string(),
            format!("{} h (the fastest class)", fmt::num1(b.first_dry_h)),
        ),
        (
            "Last vials dry".into(),
            format!("{} h (the slowest class)", fmt::num1(b.last_dry_h)),
        ),
        (
            "Peak sublimation rate, average vial".into(),
            format!("{} g/h", fmt::num2(b.peak_mean_rate_g_h)),
        ),
    ];
    match (b.vial_count, b.peak_sublimation_kg_h) {
        (Some(n), Some(kg_h)) => rows.push((
            "Peak total sublimation rate".into(),
            format!("{} kg/h for {n:.0} vials", fmt::num2(kg_h)),
        )),
        _ => rows.push((
            "Peak total sublimation rate".into(),
            match &a.dryer {
                Some(d) => {
                    let n = d.science().full_load_vials(a.container.outer_area_cm2);
                    format!(
                        "{} kg/h for {n:.0} vials: no vial count is given, so the dryer's shelves are taken as full ({} m², hexagonal packing)",
                        fmt::num2(n * b.peak_mean_rate_g_h / 1000.0),
                        fmt::trim(d.shelf_area_m2)
                    )
                }
                None => "not known: give the link a vial count or a dryer".into(),
            },
        )),
    }
    let base = &a.base;
    let density = base.solution_density_g_ml.unwrap_or(1.0);
    let unfrozen = base.unfrozen_water_g_per_g_solids.unwrap_or(0.0);
    rows.push((
        "Ice per vial".into(),
        format!(
            "{} g: {} mL at {} g/mL, less the solids ({}) and the water that never freezes ({} g per g of solids)",
            fmt::num2(glasspoint_science::drying::ice_mass_g(
                base.fill_volume_ml,
                density,
                base.solids_mass_fraction,
                unfrozen
            )),
            fmt::trim(base.fill_volume_ml),
            fmt::trim(density),
            fmt::percent(base.solids_mass_fraction),
            fmt::num2(unfrozen)
        ),
    ));
    rows.push((
        "Where those come from".into(),
        format!(
            "Density from the composition, each solid at its library density or else {} g/cm³ (from memory); unfrozen water from each amorphous solid's library Wg′ or else {} g/g (sucrose, Roos 1993, from memory).",
            fmt::trim(crate::derive::DEFAULT_SOLID_DENSITY_G_CM3),
            fmt::trim(crate::derive::UNFROZEN_WATER_G_PER_G_AMORPHOUS)
        ),
    ));
    rows.push((
        "Edge share of the load".into(),
        match a.link.edge_vial_share {
            Some(s) => format!("{} (given)", fmt::percent(s)),
            None => format!(
                "{} (the stated default: common practice, no source)",
                fmt::percent(DEFAULT_EDGE_SHARE)
            ),
        },
    ));
    rows
}

/// The dryer's limits the checks used at this cycle's pressures, or `None` when the link
/// names no dryer.
pub fn dryer_facts(a: &Assessment) -> Option<Vec<(String, String)>> {
    let d = a.dryer.as_ref()?;
    let pc = a.cycle.program.primary.chamber_pressure_mtorr;
    let not_given = || "not given, so not checked".to_string();
    let mut rows = vec![(
        format!("Capability at {} mTorr", fmt::trim(pc)),
        d.capability_kg_h(pc)
            .map(|c| format!("{} kg/h of sublimed ice", fmt::num2(c)))
            .unwrap_or_else(not_given),
    )];
    rows.push((
        "Lowest controllable pressure".into(),
        d.min_pressure_mtorr
            .map(|p| format!("{} mTorr", fmt::trim(p)))
            .unwrap_or_else(not_given),
    ));
    rows.push((
        "Condenser ice capacity".into(),
        d.condenser_capacity_kg
            .map(|c| format!("{} kg", fmt::trim(c)))
            .unwrap_or_else(not_given),
    ));
    rows.push((
        "Edge heat factor".into(),
        format!(
            "{} (edge vials' Kv ÷ centre vials')",
            fmt::trim(d.edge_heat_factor)
        ),
    ));
    rows.push((
        "Shelf area".into(),
        format!("{} m²", fmt::trim(d.shelf_area_m2)),
    ));
    Some(rows)
}
