//! The vocabulary of team records: roles, the kinds of record the audit trail names, what
//! happened to them, and what a signature means.

labelled_enum!(
    /// What a user may do; each role may do everything the ones before it may.
    Role {
        Reader => ("reader", "Reader"),
        Scientist => ("scientist", "Scientist"),
        Reviewer => ("reviewer", "Reviewer"),
        Admin => ("admin", "Administrator"),
    }
);

impl Role {
    /// Rank for "at least this role" comparisons.
    pub fn rank(self) -> u8 {
        match self {
            Role::Reader => 0,
            Role::Scientist => 1,
            Role::Reviewer => 2,
            Role::Admin => 3,
        }
    }

    pub fn at_least(self, least: Role) -> bool {
        self.rank() >= least.rank()
    }
}

labelled_enum!(
    /// What an API token may do: read only, or whatever its user's role allows.
    TokenScope {
        Read => ("read", "Read"),
        Write => ("write", "Write"),
    }
);

labelled_enum!(
    /// The kinds of record the audit trail and signatures name.
    Entity {
        Formulation => ("formulation", "Formulation"),
        Measurement => ("measurement", "Measurement"),
        Material => ("material", "Material"),
        Container => ("container", "Container"),
        Dryer => ("dryer", "Dryer"),
        Cycle => ("cycle", "Cycle"),
        Trace => ("trace", "DSC trace"),
        Run => ("run", "Run"),
        User => ("user", "User"),
        Settings => ("settings", "Team settings"),
    }
);

/// Rows of another table that belong to a record and are part of its content.
pub struct ChildRows {
    /// The key under which the rows appear in the record's snapshot.
    pub name: &'static str,
    pub table: &'static str,
    pub parent_column: &'static str,
    pub order_by: &'static str,
    /// Columns left out (row ids that change when rows are rewritten).
    pub skip: &'static [&'static str],
}

impl Entity {
    pub fn table(self) -> &'static str {
        match self {
            Entity::Formulation => "formulations",
            Entity::Measurement => "measurements",
            Entity::Material => "materials",
            Entity::Container => "containers",
            Entity::Dryer => "dryers",
            Entity::Cycle => "cycles",
            Entity::Trace => "dsc_traces",
            Entity::Run => "runs",
            Entity::User => "users",
            Entity::Settings => "team_settings",
        }
    }

    pub fn children(self) -> &'static [ChildRows] {
        match self {
            Entity::Formulation => &[
                ChildRows {
                    name: "components",
                    table: "formulation_components",
                    parent_column: "formulation_id",
                    order_by: "position",
                    skip: &["id"],
                },
                ChildRows {
                    name: "dry_layer_resistance",
                    table: "dry_layer_resistance",
                    parent_column: "formulation_id",
                    order_by: "formulation_id",
                    skip: &[],
                },
            ],
            Entity::Material => &[ChildRows {
                name: "properties",
                table: "material_properties",
                parent_column: "material_id",
                order_by: "kind",
                skip: &["id"],
            }],
            Entity::Dryer => &[
                ChildRows {
                    name: "capability",
                    table: "dryer_capability_points",
                    parent_column: "dryer_id",
                    order_by: "position",
                    skip: &["id"],
                },
                ChildRows {
                    name: "column_map",
                    table: "dryer_column_maps",
                    parent_column: "dryer_id",
                    order_by: "position",
                    skip: &[],
                },
            ],
            Entity::Cycle => &[ChildRows {
                name: "links",
                table: "cycle_links",
                parent_column: "cycle_id",
                order_by: "id",
                skip: &[],
            }],
            Entity::Run => &[
                ChildRows {
                    name: "formulations",
                    table: "run_formulations",
                    parent_column: "run_id",
                    order_by: "formulation_id",
                    skip: &[],
                },
                ChildRows {
                    name: "moisture",
                    table: "run_moisture_samples",
                    parent_column: "run_id",
                    order_by: "position",
                    skip: &["id"],
                },
                ChildRows {
                    name: "weights",
                    table: "run_vial_weights",
                    parent_column: "run_id",
                    order_by: "position",
                    skip: &["id"],
                },
            ],
            _ => &[],
        }
    }

    /// The page of one record, for links from the audit trail.
    pub fn page(self, id: i64) -> String {
        match self {
            Entity::Formulation => format!("/formulations/{id}"),
            // Measurements and containers have no page of their own: their history is it.
            Entity::Measurement => format!("/records/measurement/{id}/history"),
            Entity::Material => format!("/materials/{id}"),
            Entity::Container => format!("/records/container/{id}/history"),
            Entity::Dryer => format!("/dryers/{id}"),
            Entity::Cycle => format!("/cycles/{id}"),
            Entity::Trace => format!("/traces/{id}"),
            Entity::Run => format!("/runs/{id}"),
            Entity::User => "/admin/users".to_string(),
            Entity::Settings => "/admin/settings".to_string(),
        }
    }

    /// Resets the review state a signature set, once the record's content changes.
    pub fn unsign_sql(self) -> Option<&'static str> {
        match self {
            Entity::Measurement => Some(
                "UPDATE measurements SET review_state = 'recorded' WHERE id = $1 AND review_state <> 'recorded'",
            ),
            Entity::Run => Some(
                "UPDATE runs SET review_state = 'recorded' WHERE id = $1 AND review_state <> 'recorded'",
            ),
            Entity::Formulation => Some(
                "UPDATE formulations SET status = 'characterized' WHERE id = $1 AND status = 'approved'",
            ),
            _ => None,
        }
    }

    /// Records that a second person reviews or approves.
    pub fn signable(self) -> bool {
        matches!(
            self,
            Entity::Formulation | Entity::Measurement | Entity::Run
        )
    }
}

labelled_enum!(
    /// What an audit event records.
    Action {
        Create => ("create", "Created"),
        Update => ("update", "Changed"),
        Archive => ("archive", "Archived"),
        Restore => ("restore", "Restored"),
        Sign => ("sign", "Signed"),
        Login => ("login", "Signed in"),
        LoginFailed => ("login_failed", "Sign-in refused"),
        Logout => ("logout", "Signed out"),
        TokenCreate => ("token_create", "API token issued"),
        TokenRevoke => ("token_revoke", "API token revoked"),
        PasswordChange => ("password_change", "Password changed"),
        Disable => ("disable", "Account disabled"),
        Enable => ("enable", "Account enabled"),
    }
);

impl Action {
    /// Changes that make a new version of the record.
    pub fn bumps_version(self) -> bool {
        matches!(
            self,
            Action::Update
                | Action::Archive
                | Action::Restore
                | Action::PasswordChange
                | Action::Disable
                | Action::Enable
        )
    }

    /// Changes of what a record says (as opposed to its state): these need a reason once
    /// the record is reviewed or approved.
    pub fn changes_content(self) -> bool {
        self == Action::Update
    }
}

labelled_enum!(
    /// What a signer declares with an electronic signature.
    SignatureMeaning {
        Reviewed => ("reviewed", "Reviewed"),
        Approved => ("approved", "Approved"),
        Rejected => ("rejected", "Rejected"),
    }
);
