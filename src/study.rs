//! Grid study: the same design solved at three spacings (h, √2·h, 2h), Richardson
//! extrapolation of every peak, and an error estimate beside it.
//!
//! Input: a model and the fine analysis at its own spacing. Output: per conductor the three
//! peaks, the observed order of convergence, the extrapolated value and the estimated error of
//! the fine value, by Roache's grid convergence index (P. J. Roache, "Quantification of
//! uncertainty in computational fluid dynamics", Annu. Rev. Fluid Mech. 29, 123 (1997)):
//! GCI = F_s · |f_1 − f_2| / (ρ^p − 1) for grids of ratio ρ = √2, with safety factor
//! F_s = 1.25 when three grids give a monotone observed order p within 25 % of the formal
//! order 2 (the asymptotic range), and F_s = 3 on the larger grid difference when the order is
//! far from it, when the values oscillate, or when the coarsest grid cannot resolve the design
//! and only two grids are available: the estimate is then conservative and said to be. No bar
//! is narrower than [`VALIDATION_FLOOR`] of the peak (the offset the finite-element references
//! showed below what three grids can see).

use crate::analysis::{Analysis, AnalysisError, analyze_from};
use crate::field::{FieldMap, InsulatorPeak, JunctionSample, Medium};
use crate::model::Model;
use crate::solve::SolverParams;
use serde::Serialize;

/// Formal order of the surface field of the discretisation.
pub const FORMAL_ORDER: f64 = 2.0;

/// The study of one peak value.
#[derive(Debug, Clone, Serialize)]
pub struct PeakStudy {
    pub conductor: usize,
    pub name: String,
    /// Peaks on the fine, medium and coarse grids, V/m.
    pub peaks_v_per_m: [f64; 3],
    /// Observed order, when the three values converge monotonically.
    pub observed_order: Option<f64>,
    /// Richardson-extrapolated peak, V/m.
    pub extrapolated_v_per_m: f64,
    /// Estimated numerical error of the fine peak, V/m.
    pub error_v_per_m: f64,
    /// `error_v_per_m` relative to the fine peak.
    pub relative_error: f64,
    /// "monotone" (observed order within 25 % of the formal order: extrapolated, F_s = 1.25),
    /// "monotone, not asymptotic" (an order far from the formal one: no extrapolation,
    /// F_s = 3 on the larger difference), "oscillatory" (no observed order; the formal order
    /// and F_s = 3 are used) or "two grids" (the coarsest grid could not resolve the design).
    pub convergence: &'static str,
}

/// The study of the peak tangential field along one side of one insulator's free surface.
#[derive(Debug, Clone, Serialize)]
pub struct InsulatorStudy {
    pub dielectric: usize,
    pub name: String,
    /// `gas` or `vacuum`: the side of the surface.
    pub side: Medium,
    /// Peaks on the fine, medium and coarse grids, V/m (NaN where a grid has no sample on
    /// that side).
    pub peaks_v_per_m: [f64; 3],
    pub observed_order: Option<f64>,
    pub extrapolated_v_per_m: f64,
    /// Estimated numerical error of the fine peak, V/m.
    pub error_v_per_m: f64,
    pub relative_error: f64,
    /// As [`PeakStudy::convergence`].
    pub convergence: &'static str,
}

/// The field at one triple junction on the three grids. The value on each grid is the highest
/// conductor-surface field within 1.5 cells of the insulator, which lies nearer the junction
/// on each finer grid: it converges where the field at the contact is finite (a flat face
/// meeting the insulator at a right angle) and grows without bound where the contact is a
/// field singularity (an acute wedge of gas between a rounded electrode and the insulator, a
/// dielectric corner against the metal), so it is a number with an error bar only when the
/// three grids converge.
#[derive(Debug, Clone, Serialize)]
pub struct JunctionStudy {
    pub conductor: usize,
    pub dielectric: usize,
    /// `gas` or `vacuum`.
    pub side: Medium,
    /// Fields on the fine, medium and coarse grids, V/m (NaN where a grid has no sample).
    pub fields_v_per_m: [f64; 3],
    /// "grows with refinement" (the field rises on every finer grid, by at least as much as
    /// on the last and by more than [`JUNCTION_GROWTH`]: a singularity at the contact or a
    /// junction the grids do not resolve), "converges" otherwise (Richardson and the grid
    /// convergence index apply), or "not on every grid".
    pub convergence: &'static str,
    /// Estimated relative error of the fine value, only when the grids converge.
    pub relative_error: Option<f64>,
}

/// The whole study.
#[derive(Debug, Clone, Serialize)]
pub struct GridStudy {
    /// Cell sizes, m: fine, medium, coarse.
    pub cells_m: [f64; 3],
    /// Nodes of each grid (0 for a grid that could not be built).
    pub nodes: [usize; 3],
    /// Why the coarsest grid is missing, when it is.
    pub coarse_unavailable: Option<String>,
    pub peaks: Vec<PeakStudy>,
    /// The insulator surfaces' peak tangential fields, per dielectric and side.
    pub insulator_peaks: Vec<InsulatorStudy>,
    /// The triple junctions' fields, per conductor, dielectric and side.
    pub junctions: Vec<JunctionStudy>,
    /// The accuracy target and whether the mesh met it (set by the review).
    pub accuracy: Option<Accuracy>,
}

/// The outcome of the accuracy target on the peaks that enter a margin row.
#[derive(Debug, Clone, Serialize)]
pub struct Accuracy {
    /// Target on the estimated relative error of each peak that counts.
    pub target: f64,
    /// Whether every counted peak met the target.
    pub reached: bool,
    /// The largest estimated relative error among the counted peaks (the best the mesh
    /// achieved when the target is not reached).
    pub worst_relative_error: f64,
    /// The conductor or insulator surface with that error.
    pub worst_item: Option<String>,
    /// The conductors and insulator surfaces ("name (gas side)", "name (vacuum side)") whose
    /// peaks count: those of a conductor or insulator-surface margin row within a factor 2
    /// of the worst margin of the rows that enter the hold-off voltage.
    pub counted: Vec<String>,
    /// Refinement rounds made after the first mesh.
    pub refinements: usize,
    /// Unknowns of the fine grid at each round.
    pub unknowns: Vec<usize>,
    /// False when `[mesh] cell` was set by hand: the spacing is the expert's and no
    /// refinement is made.
    pub adaptive: bool,
    /// Why refinement stopped short of the target, when it did.
    pub stopped: Option<String>,
}

/// How far (as a fraction of the formal order) the observed order may lie from the formal
/// order for the three grids to count as in the asymptotic range, where Richardson
/// extrapolation with the safety factor 1.25 is claimed (Roache's practice: the factor 1.25
/// only when the observed order confirms the formal one; 25 % chosen here, common practice).
pub const ASYMPTOTIC_TOLERANCE: f64 = 0.25;

/// The narrowest error bar claimed, as a fraction of the peak. Against the independent
/// finite-element references (docs/references.md §15) a flat disc face converged monotonically
/// on the three grids to a value 0.012 % above its reference (whose own error is 1e-7): an
/// offset the grid differences (0.0015 %) cannot show. Every bar is therefore at least
/// ±0.02 %, the measured offset rounded up; it is far below the default target of 0.5 %.
pub const VALIDATION_FLOOR: f64 = 2e-4;

/// A triple junction whose field rises by more than this fraction from the medium to the fine
/// grid (and by at least as much as from the coarse to the medium one) is reported as growing
/// with refinement. A contact singularity E ~ s^(−a), sampled at a distance proportional to
/// the cell, rises by √2^a − 1 per grid: 1 % for a = 0.03. A weaker rise cannot be told from
/// the scatter of three grids and gets the conservative bar of an oscillating value instead
/// (holdoff's choice).
pub const JUNCTION_GROWTH: f64 = 0.01;

/// Ratio between successive grid spacings of the study.
pub const RATIO: f64 = std::f64::consts::SQRT_2;

/// Estimate from values on grids of ratio `ratio` (fine first): three values, or two when the
/// coarsest grid was not available (`f[2]` NaN).
pub fn richardson(f: [f64; 3], ratio: f64) -> (Option<f64>, f64, f64, &'static str) {
    let (f1, f2, f3) = (f[0], f[1], f[2]);
    let d12 = f2 - f1;
    let formal = ratio.powf(FORMAL_ORDER) - 1.0;
    if !f3.is_finite() {
        return (None, f1, 3.0 * d12.abs() / formal, "two grids");
    }
    let d23 = f3 - f2;
    let monotone =
        d12 != 0.0 && d23 != 0.0 && d12.signum() == d23.signum() && d23.abs() > d12.abs();
    if monotone {
        let p_obs = (d23 / d12).ln() / ratio.ln();
        let p = p_obs.clamp(1.0, FORMAL_ORDER);
        let denom = ratio.powf(p) - 1.0;
        if (p_obs - FORMAL_ORDER).abs() <= ASYMPTOTIC_TOLERANCE * FORMAL_ORDER {
            let ext = f1 - d12 / denom;
            (Some(p), ext, 1.25 * d12.abs() / denom, "monotone")
        } else {
            // Monotone but with an order far from the scheme's: the grids are not yet in the
            // asymptotic range, so no extrapolation is claimed; the error is the larger of the
            // two differences with the safety factor 3.
            let spread = d12.abs().max(d23.abs() / ratio.powf(FORMAL_ORDER));
            (None, f1, 3.0 * spread / denom, "monotone, not asymptotic")
        }
    } else {
        let spread = d12.abs().max(d23.abs() / ratio.powf(FORMAL_ORDER));
        (None, f1, 3.0 * spread / formal, "oscillatory")
    }
}

impl Accuracy {
    /// One line saying what the target was and whether the mesh met it.
    pub fn describe(&self) -> String {
        let pct = |x: f64| format!("{:.2} %", 100.0 * x);
        let worst = match &self.worst_item {
            Some(item) => format!("{} on {item}", pct(self.worst_relative_error)),
            None => "no peak counted".to_string(),
        };
        let growth = match (self.unknowns.first(), self.unknowns.last()) {
            (Some(a), Some(b)) if self.refinements > 0 => format!(
                " after {} refinement{} ({a} to {b} unknowns)",
                self.refinements,
                if self.refinements == 1 { "" } else { "s" }
            ),
            _ => String::new(),
        };
        if self.reached {
            format!(
                "accuracy target ±{} reached{growth}: worst estimated error {worst} \
                 ({} peaks of the conductor and insulator rows within a factor 2 of the worst \
                 margin)",
                pct(self.target),
                self.counted.len()
            )
        } else if !self.adaptive {
            format!(
                "accuracy target ±{} not reached with the hand-set [mesh] cell: best ±{worst}; \
                 remove `cell` to let the mesh follow the geometry and the target, or set a \
                 finer cell",
                pct(self.target)
            )
        } else {
            format!(
                "accuracy target ±{} not reached{growth}: best ±{worst} ({}); the margins \
                 carry this larger error",
                pct(self.target),
                self.stopped.as_deref().unwrap_or("refinement stopped")
            )
        }
    }
}

/// Runs the medium and coarse solves and builds the study around the fine analysis.
pub fn grid_study(
    model: &Model,
    fine: &Analysis,
    params: &SolverParams,
    stage_v: Option<&[f64]>,
) -> Result<GridStudy, AnalysisError> {
    let mut medium_model = model.clone();
    medium_model.mesh = model.mesh.scaled(RATIO);
    let mut coarse_model = model.clone();
    coarse_model.mesh = model.mesh.scaled(RATIO * RATIO);
    // The two coarser solves are independent: side by side when both fit in memory beside
    // the fine one (each solve's numbers are the same either way).
    let (medium, coarse) = if side_by_side(fine, &medium_model, &coarse_model) {
        rayon::join(
            || analyze_from(&medium_model, params, stage_v, Some((model, fine))),
            || analyze_from(&coarse_model, params, stage_v, Some((model, fine))),
        )
    } else {
        let medium = analyze_from(&medium_model, params, stage_v, Some((model, fine)));
        (
            medium,
            analyze_from(&coarse_model, params, stage_v, Some((model, fine))),
        )
    };
    let medium = medium?;
    let (coarse, coarse_unavailable) = match coarse {
        Ok(c) => (Some(c), None),
        Err(AnalysisError::Mesh(e)) => (None, Some(e.to_string())),
        Err(e) => return Err(e),
    };
    let mut peaks = Vec::new();
    for (k, p) in fine.peaks.iter().enumerate() {
        let f = [
            p.peak_surface_field_v_per_m,
            medium.peaks[k].peak_surface_field_v_per_m,
            coarse
                .as_ref()
                .map_or(f64::NAN, |c| c.peaks[k].peak_surface_field_v_per_m),
        ];
        let e = Estimate::of(f, p.scatter_v_per_m);
        peaks.push(PeakStudy {
            conductor: k,
            name: p.name.clone(),
            peaks_v_per_m: f,
            observed_order: e.order,
            extrapolated_v_per_m: e.extrapolated,
            error_v_per_m: e.error,
            relative_error: e.relative,
            convergence: e.convergence,
        });
    }
    let grids = [Some(fine), Some(&medium), coarse.as_ref()];
    let insulator_peaks = insulator_study(model, grids);
    let junctions = junction_study(model, grids);
    Ok(GridStudy {
        cells_m: [
            model.mesh.cell,
            medium_model.mesh.cell,
            coarse_model.mesh.cell,
        ],
        nodes: [
            fine.mesh.nodes(),
            medium.mesh.nodes(),
            coarse.as_ref().map_or(0, |c| c.mesh.nodes()),
        ],
        coarse_unavailable,
        peaks,
        insulator_peaks,
        junctions,
        accuracy: None,
    })
}

/// The error estimate of one peak from its values on the three grids.
struct Estimate {
    order: Option<f64>,
    extrapolated: f64,
    error: f64,
    relative: f64,
    convergence: &'static str,
}

impl Estimate {
    /// Richardson and the grid convergence index on `f` (fine, medium, coarse), plus the
    /// sampling scatter `scatter` of the fine grid, which adds to the trend the three grids
    /// show; the bar is never narrower than what the independent references showed the grid
    /// sequence cannot see ([`VALIDATION_FLOOR`]).
    fn of(f: [f64; 3], scatter: f64) -> Estimate {
        let (order, extrapolated, gci, convergence) = richardson(f, RATIO);
        let error = (gci + scatter).max(VALIDATION_FLOOR * f[0].abs());
        Estimate {
            order,
            extrapolated,
            error,
            relative: if f[0] > 0.0 { error / f[0] } else { 0.0 },
            convergence,
        }
    }
}

/// The study of every insulator surface's peak tangential field (per dielectric and side) on
/// the grids given (fine, medium, coarse; the coarse one may be missing).
fn insulator_study(model: &Model, grids: [Option<&Analysis>; 3]) -> Vec<InsulatorStudy> {
    let peaks_of = |a: Option<&Analysis>| -> Vec<InsulatorPeak> {
        let Some(a) = a else {
            return Vec::new();
        };
        let fm = FieldMap::new(&a.mesh, model, &a.solution.phi, &a.potentials);
        (0..model.dielectrics.len())
            .flat_map(|d| fm.insulator_peaks(d))
            .collect()
    };
    let [fine, medium, coarse] = grids.map(peaks_of);
    let value = |list: &[InsulatorPeak], p: &InsulatorPeak| {
        list.iter()
            .find(|q| q.dielectric == p.dielectric && q.side == p.side)
            .map_or(f64::NAN, |q| q.e_tangential)
    };
    fine.iter()
        .map(|p| {
            let f = [p.e_tangential, value(&medium, p), value(&coarse, p)];
            let e = if f[1].is_finite() {
                Estimate::of(f, p.scatter_v_per_m)
            } else {
                // No sample on this side on the medium grid: no study, the whole value is
                // the error.
                Estimate {
                    order: None,
                    extrapolated: f[0],
                    error: f[0].abs(),
                    relative: 1.0,
                    convergence: "not resolved",
                }
            };
            InsulatorStudy {
                dielectric: p.dielectric,
                name: model.dielectrics[p.dielectric].name.clone(),
                side: p.side,
                peaks_v_per_m: f,
                observed_order: e.order,
                extrapolated_v_per_m: e.extrapolated,
                error_v_per_m: e.error,
                relative_error: e.relative,
                convergence: e.convergence,
            }
        })
        .collect()
}

/// The study of every triple junction's field on the grids given (fine, medium, coarse).
fn junction_study(model: &Model, grids: [Option<&Analysis>; 3]) -> Vec<JunctionStudy> {
    let junctions_of = |a: Option<&Analysis>| -> Vec<JunctionSample> {
        let Some(a) = a else {
            return Vec::new();
        };
        let fm = FieldMap::new(&a.mesh, model, &a.solution.phi, &a.potentials);
        (0..model.dielectrics.len())
            .flat_map(|d| fm.junction_samples(&a.samples, d))
            .collect()
    };
    let [fine, medium, coarse] = grids.map(junctions_of);
    let value = |list: &[JunctionSample], j: &JunctionSample| {
        list.iter()
            .find(|q| {
                q.conductor == j.conductor && q.dielectric == j.dielectric && q.side == j.side
            })
            .map_or(f64::NAN, |q| q.sample.e)
    };
    fine.iter()
        .filter_map(|j| {
            let f = [j.sample.e, value(&medium, j), value(&coarse, j)];
            let (d12, d23) = (f[1] - f[0], f[2] - f[1]);
            let (convergence, relative_error) = if !f.iter().all(|v| v.is_finite()) {
                ("not on every grid", None)
            } else if d12 < -JUNCTION_GROWTH * f[0] && d23 < 0.0 && d12.abs() >= d23.abs() {
                ("grows with refinement", None)
            } else {
                ("converges", Some(Estimate::of(f, 0.0).relative))
            };
            Some(JunctionStudy {
                conductor: j.conductor.conductor_index()?,
                dielectric: j.dielectric,
                side: j.side,
                fields_v_per_m: f,
                convergence,
                relative_error,
            })
        })
        .collect()
}

/// Are the medium and coarse grids meshed and solved at the same time? Only with more than
/// two worker threads, and when both fit this machine's memory budget beside the fine grid's
/// mesh and solution. Each solve is already parallel inside, so on two cores the pair gains
/// nothing and holds both solvers' memory at once: `holdoff demo`, 2 threads, alternating
/// runs, min of 5 at load 5: 1.66 s and 97 MB side by side, 1.62 s and 55 MB one after the
/// other (on one thread 3.59 s against 3.30 s, 82 MB against 53 MB).
fn side_by_side(fine: &Analysis, medium: &Model, coarse: &Model) -> bool {
    if rayon::current_num_threads() < 3 {
        return false;
    }
    let budget = crate::mesh::Budget::of_machine();
    let fine_bytes = fine.mesh.nodes() as f64
        * (crate::mesh::MESH_BYTES_PER_NODE + crate::mesh::SOLVER_BYTES_PER_NODE) as f64;
    let both = [medium, coarse].iter().try_fold(fine_bytes, |sum, m| {
        let e = crate::mesh::estimate(m, budget).ok()?;
        e.exact.then_some(sum + e.mesh_and_solve_bytes)
    });
    both.is_some_and(|b| b <= budget.bytes())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn richardson_recovers_a_second_order_sequence() {
        // f(h) = 1 + 0.1 h², h = 1, 2, 4.
        let (p, ext, err, conv) = richardson([1.1, 1.4, 2.6], 2.0);
        assert_eq!(conv, "monotone");
        assert!((p.unwrap() - 2.0).abs() < 1e-12);
        assert!((ext - 1.0).abs() < 1e-12);
        assert!(err >= 0.1 - 1e-12);
    }

    /// A sequence f(h) = 1 + 0.1 h + 0.001 h⁴ on h = 1, √2, 2 converges monotonically with an
    /// observed order near 1.2, far from the formal 2: no extrapolation is claimed, and the
    /// conservative error bar still contains the true error of the fine value (0.1001).
    #[test]
    fn richardson_claims_no_extrapolation_outside_the_asymptotic_range() {
        let f = |h: f64| 1.0 + 0.1 * h + 0.001 * h.powi(4);
        let r = RATIO;
        let (p, ext, err, conv) = richardson([f(1.0), f(r), f(r * r)], r);
        assert_eq!(conv, "monotone, not asymptotic");
        assert!(p.is_none());
        assert_eq!(ext, f(1.0));
        assert!(
            err >= f(1.0) - 1.0,
            "error bar {err} < true error {}",
            f(1.0) - 1.0
        );
    }
}
