//! Runs: one execution of a cycle on a dryer. The load, the data the dryer recorded (read
//! from a delimited text export), and what the team entered by hand: residual-moisture
//! samples, vial weights for a gravimetric test, and the cake at the end.

use time::{Date, OffsetDateTime};
use utoipa::ToSchema;

use super::fields::*;
use super::ReviewState;

mod export;
mod form;

pub use export::*;
pub use form::*;

/// Largest data export the run routes accept, bytes.
pub const MAX_RUN_FILE_BYTES: usize = 64 * 1024 * 1024;
/// Most moisture samples or vial weights one run holds.
pub const MAX_ENTRIES: usize = 500;
/// Most formulations in one load.
pub const MAX_LOAD_FORMULATIONS: usize = 20;
/// Longest run, hours (a long development cycle lasts a week or two).
pub const MAX_RUN_HOURS: f64 = 1000.0;
/// Largest vial mass accepted, g.
pub const MAX_VIAL_G: f64 = 1000.0;

labelled_enum!(
    /// What a run was for.
    RunKind {
        Development => ("development", "Cycle run"),
        Gravimetric => ("gravimetric", "Gravimetric Kv test"),
    }
);

labelled_enum!(
    /// The cake as inspected at the end of the run.
    CakeAppearance {
        NotInspected => ("not_inspected", "Not inspected"),
        Intact => ("intact", "Intact, uniform"),
        Shrunk => ("shrunk", "Shrunk away from the wall"),
        Cracked => ("cracked", "Cracked"),
        PartlyCollapsed => ("partly_collapsed", "Partly collapsed"),
        Collapsed => ("collapsed", "Collapsed"),
        Meltback => ("meltback", "Meltback"),
        NoCake => ("no_cake", "No cake (gravimetric test stopped in primary)"),
    }
);

labelled_enum!(
    /// Where in the load a vial stood.
    VialLocation {
        Centre => ("centre", "Centre"),
        Edge => ("edge", "Edge"),
    }
);

labelled_enum!(
    /// What a calibration sets.
    CalibrationKind {
        Kv => ("kv", "Kv coefficients"),
        EdgeFactor => ("edge_factor", "Edge heat factor"),
        Resistance => ("resistance", "Dry-layer resistance"),
    }
);

/// A residual-moisture sample (a thief sample or a vial pulled at the end).
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize, ToSchema)]
pub struct MoistureEntry {
    /// Hours since the start of the recorded data.
    pub time_h: f64,
    pub shelf_temp_c: f64,
    /// Water content, % w/w of the dried cake.
    pub water_percent: f64,
    /// How the water was measured (e.g. Karl Fischer).
    pub method: String,
}

/// One vial weighed before and after a gravimetric test.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize, ToSchema)]
pub struct VialWeight {
    pub location: VialLocation,
    pub before_g: f64,
    pub after_g: f64,
}

impl VialWeight {
    pub fn loss_g(&self) -> f64 {
        self.before_g - self.after_g
    }
}

/// A run as stored, without the original file and the recorded series.
#[derive(Debug, Clone, serde::Serialize, ToSchema)]
pub struct Run {
    pub id: i64,
    pub name: String,
    pub kind: RunKind,
    pub cycle_id: i64,
    pub dryer_id: Option<i64>,
    #[serde(with = "date_text")]
    #[schema(value_type = String)]
    pub run_on: Date,
    pub container_id: i64,
    pub vial_count: Option<i64>,
    pub fill_volume_ml: f64,
    /// The formulations of the load.
    pub formulation_ids: Vec<i64>,
    /// The formulation in the probed vials (the one whose Rp the run reads).
    pub probed_formulation_id: Option<i64>,
    /// The chamber pressure of primary drying when it differs from the cycle's (a
    /// gravimetric series runs one cycle at several pressures).
    pub chamber_pressure_mtorr: Option<f64>,
    /// The part of the record a gravimetric test's vials lost their weight over, hours.
    pub test_start_h: Option<f64>,
    pub test_end_h: Option<f64>,
    pub cake_appearance: CakeAppearance,
    pub cake_notes: String,
    pub notes: String,
    pub review_state: ReviewState,
    pub moisture: Vec<MoistureEntry>,
    pub weights: Vec<VialWeight>,
    /// The data export as uploaded ("" when none yet).
    pub file_name: String,
    pub content_sha256: String,
    pub byte_count: i64,
    /// What the reader assumed (units not stated, columns guessed).
    pub import_notes: Vec<String>,
    pub version: i64,
    #[serde(with = "time::serde::rfc3339")]
    #[schema(value_type = String)]
    pub created_at: OffsetDateTime,
}

impl Run {
    pub fn has_data(&self) -> bool {
        !self.content_sha256.is_empty()
    }
}

mod date_text {
    use serde::Serializer;
    use time::Date;

    pub fn serialize<S: Serializer>(d: &Date, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_str(&super::format_date(*d))
    }
}

/// What a run form or API call sets.
#[derive(Debug, Clone, PartialEq)]
pub struct RunDraft {
    pub name: String,
    pub kind: RunKind,
    pub cycle_id: i64,
    pub dryer_id: Option<i64>,
    pub run_on: Date,
    pub container_id: i64,
    pub vial_count: Option<i64>,
    pub fill_volume_ml: f64,
    pub formulation_ids: Vec<i64>,
    pub probed_formulation_id: Option<i64>,
    pub chamber_pressure_mtorr: Option<f64>,
    pub test_start_h: Option<f64>,
    pub test_end_h: Option<f64>,
    pub cake_appearance: CakeAppearance,
    pub cake_notes: String,
    pub notes: String,
    pub moisture: Vec<MoistureEntry>,
    pub weights: Vec<VialWeight>,
}
