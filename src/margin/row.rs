//! Margin rows and their summary: status bands, the row record, ranking, the hold-off voltage
//! and its scaling note, and the sharp-corner list.

use super::*;

/// Pass, review or fail against the design factor, or no number.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Status {
    Fail,
    Review,
    Pass,
    /// The criterion is outside its range of validity: the row gives the reason, not a number.
    OutsideValidity,
}

impl Status {
    pub fn label(self) -> &'static str {
        match self {
            Status::Pass => "pass",
            Status::Review => "review",
            Status::Fail => "FAIL",
            Status::OutsideValidity => "outside validity",
        }
    }

    /// The status of `margin` against `design_factor`.
    pub fn of(margin: f64, design_factor: f64) -> Status {
        if margin < design_factor {
            Status::Fail
        } else if margin < REVIEW_BAND * design_factor {
            Status::Review
        } else {
            Status::Pass
        }
    }
}

/// The medium (or surface type) a row checks.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum RowMedium {
    Gas,
    Vacuum,
    InsulatorGasSide,
    InsulatorVacuumSide,
    TripleJunctionGas,
    TripleJunctionVacuum,
}

impl RowMedium {
    pub fn label(self) -> &'static str {
        match self {
            RowMedium::Gas => "gas",
            RowMedium::Vacuum => "vacuum",
            RowMedium::InsulatorGasSide => "insulator, gas side",
            RowMedium::InsulatorVacuumSide => "insulator, vacuum side",
            RowMedium::TripleJunctionGas => "triple junction, gas",
            RowMedium::TripleJunctionVacuum => "triple junction, vacuum",
        }
    }
}

/// How the margin of a row follows the terminal voltage (all three are exact: margin ∝ 1/V).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Scaling {
    /// Criterion linear in the field: margin = limit ÷ peak.
    Linear,
    /// Cranberg's V·E, quadratic in the field: margin = √(C/(V·E)), closed form.
    SquareRoot,
    /// Streamer integral: the inception factor, found by bisection.
    Bisection,
}

/// One check.
#[derive(Debug, Clone, Serialize)]
pub struct MarginRow {
    /// 1 = worst.
    pub rank: usize,
    pub item: String,
    pub medium: RowMedium,
    pub criterion: Criterion,
    /// The criterion as named in the output, with its constants.
    pub criterion_name: String,
    pub source: String,
    pub mark: Mark,
    /// The unit of `peak` and `limit`: `field_v_per_m` or `voltage_v`.
    pub kind: LimitKind,
    /// The computed value at the design terminal voltage. (Peak and limits are written to
    /// the JSON with their unit in the key, by `report::RowJson`.)
    #[serde(skip)]
    pub peak: f64,
    /// The limit as used (derated where the row is derated); `None` outside validity.
    #[serde(skip)]
    pub limit: Option<f64>,
    /// The ideal (undrated) limit; `None` outside validity.
    #[serde(skip)]
    pub limit_ideal: Option<f64>,
    /// Factor to the criterion at the limit as used; `None` outside validity.
    pub margin: Option<f64>,
    pub margin_ideal: Option<f64>,
    /// The derating of the limit (factor 1 = ideal), with its basis.
    pub derating: Derating,
    pub status: Status,
    pub at_m: [f64; 2],
    /// Estimated relative numerical error of the peak (grid study), when known.
    pub numerical_error: Option<f64>,
    /// A `[checks]` override entered this row.
    pub user_set: bool,
    pub validity: Validity,
    pub scaling: Scaling,
    /// Whether the row enters the hold-off voltage.
    pub in_holdoff: bool,
    /// A cross-check shown beside the criterion that governs here (chosen by the geometry, see
    /// [`GAP_TO_RADIUS`]): neither in the hold-off voltage nor in the worst status.
    pub cross_check: bool,
    /// Further notes: field-line end, assumptions, junction advice.
    pub note: Option<String>,
}

/// The hold-off voltage and the row that sets it.
#[derive(Debug, Clone, Serialize)]
pub struct Holdoff {
    pub voltage_v: f64,
    pub item: String,
    pub criterion: Criterion,
    pub criterion_name: String,
    pub rank: usize,
}

/// A field line traced for the margins, summarised for the report.
#[derive(Debug, Clone, Serialize)]
pub struct LineSummary {
    pub from: String,
    pub to: String,
    pub medium: Medium,
    pub start_m: [f64; 2],
    pub end_m: [f64; 2],
    pub length_m: f64,
    pub voltage_v: f64,
    pub samples: usize,
}

/// All margins of a run.
#[derive(Debug, Clone, Serialize)]
pub struct Margins {
    pub design_factor: f64,
    pub terminal_voltage_v: f64,
    pub rows: Vec<MarginRow>,
    /// Hold-off voltage with the limits as used (derated where gas rows are derated).
    pub holdoff: Option<Holdoff>,
    /// Hold-off voltage with every limit ideal.
    pub holdoff_ideal: Option<Holdoff>,
    /// How the hold-off voltage was found, and its assumptions.
    pub holdoff_notes: Vec<String>,
    pub field_lines: Vec<LineSummary>,
    /// Checks that could not be made, and why.
    pub notes: Vec<String>,
}

impl Margins {
    /// The worst status of the rows with a number (`Pass` when there are none); cross-checks
    /// do not count.
    pub fn worst_status(&self) -> Status {
        self.rows
            .iter()
            .filter(|r| !r.cross_check)
            .map(|r| r.status)
            .filter(|s| *s != Status::OutsideValidity)
            .min()
            .unwrap_or(Status::Pass)
    }

    /// True when any row fails the design factor.
    pub fn any_fail(&self) -> bool {
        self.worst_status() == Status::Fail
    }
}

impl MarginRow {
    /// The row's criterion label (docs/glossary.md): the criterion's label, "(gap voltage)"
    /// for the limiting field applied to a gap voltage.
    pub fn criterion_label(&self) -> String {
        match (self.criterion, self.kind) {
            (Criterion::CriticalField, LimitKind::Voltage) => {
                "limiting field (gap voltage)".to_string()
            }
            (c, _) => c.label().to_string(),
        }
    }

    /// The label with what qualifies the row: its derating, a user-set constant, a
    /// cross-check.
    pub fn criterion_label_qualified(&self) -> String {
        let mut label = self.criterion_label();
        if self.derating.factor != 1.0 {
            label.push_str(&format!(", derated x{}", self.derating.factor));
        }
        if self.user_set {
            label.push_str(" [user-set]");
        }
        if self.cross_check {
            label.push_str(" (cross-check)");
        }
        label
    }
}

/// A sharp convex corner of a conductor exposed to the field: the field there is singular.
#[derive(Debug, Clone, Serialize)]
pub struct SharpCorner {
    pub conductor: String,
    pub at: Point,
}

impl SharpCorner {
    pub(super) fn location(&self) -> String {
        format!("r, z = {:.1}, {:.1} mm", self.at.r * 1e3, self.at.z * 1e3)
    }

    pub(super) fn describe(&self) -> String {
        format!(
            "FIELD SINGULARITY: conductor '{}' has a sharp corner at {}; the field at a sharp \
             edge grows without bound as the mesh is refined, so it has no finite peak, margin \
             or hold-off voltage: give the corner a radius (`corner_radius`, `fillet`)",
            self.conductor,
            self.location()
        )
    }
}

/// The sharp corners of every conductor that face the field: not buried in another conductor,
/// not on another conductor's surface and not on the tank wall (a corner against a wall or a
/// touching conductor is a junction, where the field goes to zero instead).
pub fn sharp_corners(model: &Model) -> Vec<SharpCorner> {
    let mut out = Vec::new();
    for (index, c) in model.conductors.iter().enumerate() {
        let tol = 1e-6 * (1.0 + c.shape.scale());
        for at in c.shape.sharp_corners() {
            let touches = model
                .conductors
                .iter()
                .enumerate()
                .any(|(other, o)| other != index && o.shape.sdf(at) <= tol);
            let on_wall = match model.tank {
                crate::model::Tank::Cylinder {
                    inner_radius,
                    length,
                } => at.z <= tol || at.z >= length - tol || at.r >= inner_radius - tol,
                crate::model::Tank::Sphere { inner_radius } => {
                    crate::geometry::magnitude(at.r, at.z - inner_radius) >= inner_radius - tol
                }
            };
            if !touches && !on_wall {
                out.push(SharpCorner {
                    conductor: c.name.clone(),
                    at,
                });
            }
        }
    }
    out
}

/// Ranks rows worst first (rows with a margin by margin, then the rows outside validity) and
/// numbers them.
pub fn rank(rows: &mut [MarginRow]) {
    rows.sort_by(|a, b| match (a.margin, b.margin) {
        (Some(x), Some(y)) => x.total_cmp(&y),
        (Some(_), None) => std::cmp::Ordering::Less,
        (None, Some(_)) => std::cmp::Ordering::Greater,
        (None, None) => std::cmp::Ordering::Equal,
    });
    for (k, r) in rows.iter_mut().enumerate() {
        r.rank = k + 1;
    }
}

/// The hold-off voltage: the terminal voltage times the smallest margin (as used, or ideal) of
/// the rows that enter it.
pub fn holdoff(rows: &[MarginRow], terminal_voltage_v: f64, ideal: bool) -> Option<Holdoff> {
    rows.iter()
        .filter(|r| r.in_holdoff)
        .filter_map(|r| {
            let m = if ideal { r.margin_ideal } else { r.margin }?;
            Some((m, r))
        })
        .min_by(|a, b| a.0.total_cmp(&b.0))
        .map(|(m, r)| Holdoff {
            voltage_v: m * terminal_voltage_v,
            item: r.item.clone(),
            criterion: r.criterion,
            criterion_name: r.criterion_name.clone(),
            rank: r.rank,
        })
}

/// Where the linear scaling from the design voltage `v_design` to the hold-off `holdoff_v`
/// stays inside the criteria's validity and where it leaves it (both magnitudes, V).
pub(super) fn scaling_note(rows: &[MarginRow], holdoff_v: f64, v_design: f64) -> String {
    let f = holdoff_v / v_design;
    let mut text = format!(
        "scaling to {f:.2} x the design voltage ({}): the field limits of the gas, corona and \
         insulator rows do not depend on the terminal voltage (their validity in gap, pd, \
         density and uniformity holds at any voltage), and the streamer integral is evaluated \
         at its own inception voltage",
        crate::units::kv_three_significant(holdoff_v)
    );
    if rows.iter().any(|r| r.criterion == Criterion::Cranberg) {
        let (lo, hi) = crate::breakdown::vacuum::CRANBERG_VOLTAGE_RANGE_V;
        let _ = write!(
            text,
            "; Cranberg's vacuum rows rest on gap voltages of {} to {} and were checked at \
             the design gap voltages: scaled {f:.2} x, a gap above {} at the design voltage \
             leaves that range",
            crate::units::kv_three_significant(lo),
            crate::units::kv_three_significant(hi),
            crate::units::kv_three_significant(hi / f)
        );
    }
    if f > 1.0 {
        let _ = write!(
            text,
            "; outside the field, the scaling leaves what was checked: the grading resistors, \
             protective gaps, multiplier and stack were checked at the design voltage only, and \
             at the hold-off they see {f:.2} x their voltage ({:.2} x the resistor dissipation) \
             and the stored energy is {:.2} x as large",
            f * f,
            f * f
        );
    }
    text
}
