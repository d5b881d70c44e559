//! What a replay states about its own assumptions (leakage, ratings, node currents, the
//! transient), as data; `report::faults::notes` words them.

use super::*;

/// One stated assumption or limit of a replay. Columns are named as the design names them.
#[derive(Debug, Clone, PartialEq)]
pub enum ReplayNote {
    /// The column gives no resistor value: equal resistors stand in.
    EqualResistors { column: String },
    /// The column's protective gaps clamp; `band` is the first gap's relative firing band.
    GapsClamp { column: String, band: f64 },
    /// No insulator leakage (`leakage = "none"`).
    NoLeakage { column: String },
    /// Leakage across every gap as the design gives it, Ω.
    LeakagePerGap { column: String, ohm: f64 },
    /// Bulk leakage from the insulators' materials: (dielectric, material, resistivity Ω·m)
    /// of each path, the least leakage resistance of a gap, Ω, and the chain's resistance per
    /// gap over it.
    LeakageFromMaterials {
        column: String,
        paths: Vec<(String, String, f64)>,
        least_ohm: f64,
        share: f64,
    },
    /// No insulator with a known material spans the column's gaps.
    NoLeakagePath { column: String },
    /// A remark of the leakage model about the column (`grading::leakage`).
    LeakageRemark { column: String, remark: String },
    /// Resistor voltages after a spark against the impulse rating, V.
    ImpulseRating { column: String, volts: f64 },
    /// No impulse rating: the DC rating, V, stands in after a spark.
    DcRatingAfterSpark { column: String, volts: f64 },
    /// No resistor rating: voltages reported, not checked.
    NoRating { column: String },
    /// Current drawn from the column's electrodes in every scenario, A.
    NodeCurrent { column: String, amps: f64 },
    /// Draws asked for, but no column gives a tolerance.
    NoDraws,
    /// No conductor tied to the terminal voltage: the spark is taken from the highest one.
    SparkFromHighest,
    /// The transient could not be formed, and why.
    NoTransient { reason: String },
    /// The bare transient was formed.
    Transient,
    /// The transient with `gaps` protective gaps conducting was formed.
    GapsConducting { gaps: usize },
    /// Gaps left over their clamp because the conducting ones around them fix their voltage.
    OverInLoop { gaps: usize },
    /// The transient with the protective gaps conducting could not be formed, and why.
    NoGapsConducting { reason: String },
}

/// What the replay assumes about leakage, ratings and node currents, per column.
pub(super) fn network_notes(model: &Model, networks: &[Network]) -> Vec<ReplayNote> {
    let mut notes = Vec::new();
    for n in networks {
        if n.relative {
            notes.push(ReplayNote::EqualResistors {
                column: n.name.clone(),
            });
        }
        if let Some(p) = n.protective.first() {
            notes.push(ReplayNote::GapsClamp {
                column: n.name.clone(),
                band: p.band,
            });
        }
    }
    for n in networks {
        let Some(col) = model.columns.get(n.column) else {
            continue;
        };
        let column = n.name.clone();
        if !n.relative {
            match col.leakage {
                crate::model::LeakageSpec::None => notes.push(ReplayNote::NoLeakage {
                    column: column.clone(),
                }),
                crate::model::LeakageSpec::PerGap(ohm) => notes.push(ReplayNote::LeakagePerGap {
                    column: column.clone(),
                    ohm,
                }),
                crate::model::LeakageSpec::FromMaterials => {
                    let l = grading::leakage::from_materials(model, n.column);
                    let r_min = l.per_gap_ohm.iter().flatten().copied().reduce(f64::min);
                    let chain = n
                        .resistors_ohm
                        .first()
                        .map(|rs| 1.0 / rs.iter().map(|r| 1.0 / r).sum::<f64>());
                    notes.push(match (r_min, chain) {
                        (Some(rl), Some(rc)) => ReplayNote::LeakageFromMaterials {
                            column: column.clone(),
                            paths: l
                                .paths
                                .iter()
                                .map(|p| {
                                    (
                                        p.dielectric.clone(),
                                        p.material.clone(),
                                        p.resistivity_ohm_m,
                                    )
                                })
                                .collect(),
                            least_ohm: rl,
                            share: rc / rl,
                        },
                        _ => ReplayNote::NoLeakagePath {
                            column: column.clone(),
                        },
                    });
                    notes.extend(l.notes.iter().map(|x| ReplayNote::LeakageRemark {
                        column: column.clone(),
                        remark: x.clone(),
                    }));
                }
            }
        }
        match (col.resistor_impulse_v, col.resistor_rating_v) {
            (Some(volts), _) => notes.push(ReplayNote::ImpulseRating {
                column: column.clone(),
                volts,
            }),
            (None, Some(volts)) => notes.push(ReplayNote::DcRatingAfterSpark {
                column: column.clone(),
                volts,
            }),
            (None, None) => {}
        }
        if col.resistor_rating_v.is_none() && col.resistor_power_w.is_none() {
            notes.push(ReplayNote::NoRating {
                column: column.clone(),
            });
        }
        if n.node_current_a.iter().any(|i| *i != 0.0) {
            notes.push(ReplayNote::NodeCurrent {
                column,
                amps: n.node_current_a.iter().sum(),
            });
        }
    }
    notes
}
