//! The closed vocabularies of the notebook, each with a stable code (stored, and used in
//! JSON) and a label for pages.

macro_rules! labelled_enum {
    ($(#[$meta:meta])* $name:ident { $($variant:ident => ($code:literal, $label:literal)),+ $(,)? }) => {
        $(#[$meta])*
        #[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize, serde::Deserialize, utoipa::ToSchema)]
        pub enum $name {
            $( #[serde(rename = $code)] $variant ),+
        }

        impl $name {
            pub const ALL: &'static [$name] = &[$($name::$variant),+];

            /// The stored and JSON spelling.
            pub fn code(self) -> &'static str {
                match self { $($name::$variant => $code),+ }
            }

            /// The words shown on pages.
            pub fn label(self) -> &'static str {
                match self { $($name::$variant => $label),+ }
            }

            pub fn parse(code: &str) -> Option<Self> {
                match code.trim() { $($code => Some($name::$variant),)+ _ => None }
            }

            /// Every code, for messages ("one of: a, b, c").
            pub fn codes() -> String {
                Self::ALL.iter().map(|v| v.code()).collect::<Vec<_>>().join(", ")
            }
        }

        impl std::fmt::Display for $name {
            fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
                f.write_str(self.label())
            }
        }
    };
}

labelled_enum!(
    /// What a material does in the formulation.
    MaterialRole {
        BulkingAgent => ("bulking_agent", "Bulking agent"),
        Lyoprotectant => ("lyoprotectant", "Lyoprotectant / stabilizer"),
        Buffer => ("buffer", "Buffer"),
        TonicityAgent => ("tonicity_agent", "Tonicity agent"),
        Surfactant => ("surfactant", "Surfactant"),
        Active => ("active", "Active / protein"),
        Other => ("other", "Other"),
    }
);

labelled_enum!(
    /// How a material behaves when the solution freezes.
    FreezingBehaviour {
        Amorphous => ("amorphous", "Stays amorphous"),
        Crystallizes => ("crystallizes", "Crystallizes"),
        MayCrystallize => ("may_crystallize", "May crystallize"),
    }
);

labelled_enum!(
    /// The reference properties a material can carry, each with its own source.
    PropertyKind {
        TgPrime => ("tg_prime_c", "Tg′ (°C)"),
        Tg => ("tg_c", "Anhydrous Tg (°C)"),
        Te => ("te_c", "Eutectic Te (°C)"),
        DeltaCp => ("delta_cp_j_gk", "ΔCp at Tg (J/(g·K))"),
        GordonTaylorK => ("gt_k_water", "Gordon–Taylor k with water"),
        TgPrimeBlendK => ("tg_prime_blend_k", "Gordon–Taylor k in Tg′ blends"),
        Density => ("density_g_cm3", "Density (g/cm³)"),
        MolarMass => ("molar_mass_g_mol", "Molar mass (g/mol)"),
        UnfrozenWater => ("unfrozen_water_g_g", "Unfrozen water Wg′ (g per g solid)"),
    }
);

labelled_enum!(
    /// Where a property value came from.
    SourceKind {
        Literature => ("literature", "Literature"),
        InHouse => ("in_house", "In-house"),
    }
);

labelled_enum!(
    /// Where a formulation stands; archived instead of deleted.
    FormulationStatus {
        Draft => ("draft", "Draft"),
        Characterized => ("characterized", "Characterized"),
        Approved => ("approved", "Approved"),
        Archived => ("archived", "Archived"),
    }
);

labelled_enum!(
    /// How a concentration was entered.
    ConcentrationUnit {
        MgPerMl => ("mg/mL", "mg/mL"),
        PercentWv => ("% w/v", "% w/v"),
    }
);

labelled_enum!(
    /// The thermal result a measurement records.
    MeasurementKind {
        TgPrime => ("tg_prime", "Tg′ (freeze-concentrate glass transition)"),
        Te => ("te", "Te (eutectic melting)"),
        CollapseOnset => ("tc_onset", "Collapse onset"),
        CollapseFull => ("tc_full", "Full collapse"),
        CrystallizationExotherm => ("cryst_exotherm_onset", "Crystallization exotherm onset"),
        IceMeltOnset => ("ice_melt_onset", "Ice-melt onset"),
        CakeTg => ("cake_tg", "Dried-cake Tg"),
    }
);

labelled_enum!(
    /// The technique behind a measurement.
    MeasurementMethod {
        Dsc => ("dsc", "DSC"),
        ModulatedDsc => ("mdsc", "Modulated DSC"),
        Microscopy => ("fdm", "Freeze-drying microscopy"),
        Impedance => ("impedance", "Electrical impedance"),
        Other => ("other", "Other"),
    }
);

labelled_enum!(
    /// Second-person review of a result.
    ReviewState {
        Recorded => ("recorded", "Recorded"),
        Reviewed => ("reviewed", "Reviewed"),
        Rejected => ("rejected", "Rejected"),
    }
);

labelled_enum!(
    /// How a vial was made.
    ContainerKind {
        Tubing => ("tubing", "Tubing"),
        Molded => ("molded", "Molded"),
    }
);

impl PropertyKind {
    /// Plausible range for a value of this kind; outside it the entry is refused.
    pub fn range(self) -> (f64, f64) {
        match self {
            PropertyKind::TgPrime | PropertyKind::Te => (-120.0, 50.0),
            PropertyKind::Tg => (-150.0, 300.0),
            PropertyKind::DeltaCp => (0.0, 5.0),
            PropertyKind::GordonTaylorK | PropertyKind::TgPrimeBlendK => (0.0, 100.0),
            PropertyKind::Density => (0.1, 25.0),
            PropertyKind::MolarMass => (1.0, 1.0e7),
            PropertyKind::UnfrozenWater => (0.0, 2.0),
        }
    }

    /// Whether the value may carry an onset/midpoint convention.
    pub fn has_convention(self) -> bool {
        matches!(self, PropertyKind::TgPrime | PropertyKind::Tg)
    }
}

impl ConcentrationUnit {
    /// The concentration in mg/mL (1 % w/v = 1 g per 100 mL = 10 mg/mL).
    pub fn to_mg_ml(self, value: f64) -> f64 {
        match self {
            ConcentrationUnit::MgPerMl => value,
            ConcentrationUnit::PercentWv => value * 10.0,
        }
    }
}

impl MeasurementKind {
    /// Kinds measured on the frozen solution (as opposed to the dried cake).
    pub fn is_frozen_state(self) -> bool {
        !matches!(self, MeasurementKind::CakeTg)
    }
}

labelled_enum!(
    /// Where a candidate cycle stands; archived instead of deleted.
    CycleStatus {
        Candidate => ("candidate", "Candidate"),
        Archived => ("archived", "Archived"),
    }
);
