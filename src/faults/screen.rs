//! Screening of the conductor rows of a scenario against the nominal state, so that the field
//! lines and streamer integrals are formed only where they can set the scenario's worst margin.
//!
//! Every margin of a conductor falls at most in proportion to the field around it: a field
//! criterion is limit ÷ peak, a gap voltage is the integral of the field along its line, and
//! the streamer integral grows with the field (its inception factor scales as 1/λ when the
//! field scales by λ). So along the same lines, a conductor whose field rises by at most ρ
//! keeps every margin above its nominal worst margin divided by ρ. The rise ρ is read from the
//! scenario's own field: the largest ratio to nominal over the conductor's surface samples and
//! over the grid nodes of a box around it and its nominal field lines (dilated by a quarter of
//! its longest line). Lines may shift in a scenario, so the bound is divided again by
//! [`SAFETY`]. A conductor is evaluated in full when that bound does not clear the scenario's
//! worst margin found so far (from the insulator rows and the conductors that must be
//! evaluated); the rows it leaves out are above the worst one, so the scenario's worst row —
//! its item, criterion and margin — is the one a full evaluation gives, bit for bit.
//! [`super::ReplayOptions::exhaustive`] evaluates every row instead
//! (src/verification/faults.rs compares the two).

use crate::analysis::Analysis;
use crate::breakdown::LimitKind;
use crate::field::{FieldMap, SurfaceSample};
use crate::margin::{MarginRow, Margins, RowMedium};
use crate::mesh::Mesh;
use crate::model::Model;

/// Safety factor on the field-rise bound for the shift of field lines and of the lines chosen
/// from the surface samples in a scenario (holdoff's choice). Measured with every row formed,
/// on every conductor of every scenario of the demo and tandem fault sets, the bound held
/// without it (the smallest ratio of a conductor's margin to its bound was 1.0, reached where
/// the field did not change); `benches/faults.rs` and src/verification/faults.rs check that
/// the screened replay equals the exhaustive one.
pub const SAFETY: f64 = 1.1;

/// A field below this fraction of a conductor's nominal peak surface field counts as this
/// fraction in the ratios: a near-zero nominal field would make any change look infinite, and
/// a field this far below the peak adds nothing to a streamer integral. A gap voltage, the
/// integral of the field along its whole line, is bounded with the floor added over the line
/// (`Screen::new`).
const FLOOR: f64 = 0.1;

/// Node-index ranges (inclusive) of a box of the grid.
#[derive(Debug, Clone, Copy)]
struct NodeBox {
    i: (usize, usize),
    j: (usize, usize),
}

impl NodeBox {
    /// The node indices of each grid row of the box.
    fn rows(self, mesh: &Mesh) -> impl Iterator<Item = std::ops::RangeInclusive<usize>> + '_ {
        (self.j.0..=self.j.1).map(move |j| mesh.idx(self.i.0, j)..=mesh.idx(self.i.1, j))
    }
}

/// What the screening keeps of the nominal state.
pub(super) struct Screen {
    /// Smallest margin of each conductor's rows at nominal; None for a conductor evaluated in
    /// every scenario (no rows at nominal, a row without a number, or rows not placed on it).
    nominal: Vec<Option<f64>>,
    /// The nodes whose field rise counts for each conductor.
    boxes: Vec<Option<NodeBox>>,
    /// The floor of each conductor's ratios, V/m.
    floor: Vec<f64>,
    /// The reciprocal of the field magnitude at every node at nominal (infinite where it is
    /// zero or not needed).
    inv_e: Vec<f64>,
    /// Nodes inside some box.
    in_box: Vec<bool>,
    /// Surface samples at nominal, in their order (the same in every scenario).
    samples: Vec<SurfaceSample>,
}

/// The conductor a row or a line start lies on: those whose surface passes within `tol` of
/// `at`, nearest first; empty when none does.
fn on_conductors(model: &Model, at: [f64; 2], tol: f64) -> Vec<usize> {
    let p = crate::geometry::Point::new(at[0], at[1]);
    model
        .conductors
        .iter()
        .enumerate()
        .filter(|(_, c)| c.shape.sdf(p).abs() <= tol)
        .map(|(k, _)| k)
        .collect()
}

impl Screen {
    /// The screen of the nominal state: its full evaluation `nominal` on `work` (whose
    /// samples and field are the nominal ones).
    pub(super) fn new(model: &Model, work: &Analysis, nominal: &Margins) -> Screen {
        let mesh = &work.mesh;
        let nc = model.conductors.len();
        let tol = 1e-3 * mesh.cell;
        let mut reach = vec![0.0f64; nc];
        let mut ends: Vec<Vec<[f64; 2]>> = vec![Vec::new(); nc];
        for l in &nominal.field_lines {
            for c in on_conductors(model, l.start_m, tol) {
                reach[c] = reach[c].max(l.length_m);
                ends[c].push(l.start_m);
                ends[c].push(l.end_m);
            }
        }
        let mut peak = vec![0.0f64; nc];
        for s in &work.samples {
            if let Some(c) = s.conductor.conductor_index() {
                peak[c] = peak[c].max(s.e);
            }
        }
        let floor: Vec<f64> = peak.iter().map(|p| FLOOR * p).collect();
        let mut least: Vec<Option<f64>> = vec![None; nc];
        let mut always = vec![false; nc];
        for r in &nominal.rows {
            if !matches!(r.medium, RowMedium::Gas | RowMedium::Vacuum) {
                continue;
            }
            let on = on_conductors(model, r.at_m, tol);
            if on.is_empty() {
                // A row placed on no conductor: nothing can be screened safely.
                always.iter_mut().for_each(|a| *a = true);
            }
            for c in on {
                // A gap voltage V over a line of length L: where the field rises by at most ρ
                // over the floor F, the voltage is at most ρ(V + F·L).
                let m = match (r.margin, r.kind) {
                    (Some(m), LimitKind::Voltage) if r.peak > 0.0 => {
                        Some(m * r.peak / (r.peak + floor[c] * reach[c]))
                    }
                    (m, _) => m,
                };
                match m {
                    Some(m) if m.is_finite() => {
                        least[c] = Some(least[c].map_or(m, |x: f64| x.min(m)))
                    }
                    _ => always[c] = true,
                }
            }
        }
        let tank = model.tank.bbox();
        let boxes: Vec<Option<NodeBox>> = (0..nc)
            .map(|c| {
                let b = model.conductors[c].shape.bbox();
                let (mut r0, mut r1, mut z0, mut z1) = (b.r_min, b.r_max, b.z_min, b.z_max);
                for e in &ends[c] {
                    r0 = r0.min(e[0]);
                    r1 = r1.max(e[0]);
                    z0 = z0.min(e[1]);
                    z1 = z1.max(e[1]);
                }
                let d = 0.25 * reach[c] + 2.0 * mesh.cell;
                let (r0, r1) = ((r0 - d).max(tank.r_min), (r1 + d).min(tank.r_max));
                let (z0, z1) = ((z0 - d).max(tank.z_min), (z1 + d).min(tank.z_max));
                if !(r0 <= r1 && z0 <= z1) {
                    return None;
                }
                let i = (
                    mesh.r.locate(r0),
                    (mesh.r.locate(r1) + 1).min(mesh.nr() - 1),
                );
                let j = (
                    mesh.z.locate(z0),
                    (mesh.z.locate(z1) + 1).min(mesh.nz() - 1),
                );
                Some(NodeBox { i, j })
            })
            .collect();
        let mut in_box = vec![false; mesh.nodes()];
        for b in boxes.iter().flatten() {
            for row in b.rows(mesh) {
                in_box[row].fill(true);
            }
        }
        let node_e = node_magnitudes(model, work, &in_box);
        let nominal_min = (0..nc)
            .map(|c| if always[c] { None } else { least[c] })
            .collect();
        Screen {
            nominal: nominal_min,
            boxes,
            floor,
            inv_e: node_e.iter().map(|e| 1.0 / e).collect(),
            in_box,
            samples: work.samples.clone(),
        }
    }

    /// The rise of the field around each conductor from nominal to the scenario loaded in
    /// `work` (infinite where a floor-level nominal field grew, or the samples do not match).
    pub(super) fn rise(&self, model: &Model, work: &Analysis) -> Vec<f64> {
        let nc = self.nominal.len();
        let mut rho = vec![1.0f64; nc];
        if work.samples.len() != self.samples.len()
            || work
                .samples
                .iter()
                .zip(&self.samples)
                .any(|(a, b)| a.at != b.at || a.conductor != b.conductor)
        {
            return vec![f64::INFINITY; nc];
        }
        for (s, s0) in work.samples.iter().zip(&self.samples) {
            if let Some(c) = s.conductor.conductor_index() {
                let ratio = s.e / s0.e.max(self.floor[c]);
                rho[c] = rho[c].max(if ratio.is_nan() { f64::INFINITY } else { ratio });
            }
        }
        let node_e = node_magnitudes(model, work, &self.in_box);
        if node_e.iter().any(|e| e.is_nan()) {
            // A field without a number somewhere: no bound holds for the boxes that hold it.
            for (c, b) in self.boxes.iter().enumerate() {
                if b.is_none_or(|b| {
                    b.rows(&work.mesh)
                        .any(|row| node_e[row].iter().any(|e| e.is_nan()))
                }) {
                    rho[c] = f64::INFINITY;
                }
            }
        }
        let mesh: &Mesh = &work.mesh;
        for (c, b) in self.boxes.iter().enumerate() {
            let Some(b) = b else {
                rho[c] = f64::INFINITY;
                continue;
            };
            if rho[c].is_infinite() || self.floor[c] <= 0.0 {
                // Without a floor, a node without field at nominal or now gives no ratio.
                rho[c] = f64::INFINITY;
                continue;
            }
            // ratio = e / max(e₀, floor) = e · min(1/e₀, 1/floor), in lanes of four.
            let inv_floor = 1.0 / self.floor[c];
            let mut lanes = [rho[c]; 4];
            for row in b.rows(mesh) {
                let (e, inv) = (&node_e[row.clone()], &self.inv_e[row]);
                let mut e4 = e.chunks_exact(4);
                let mut inv4 = inv.chunks_exact(4);
                for (e, inv) in e4.by_ref().zip(inv4.by_ref()) {
                    for l in 0..4 {
                        let ratio = e[l] * inv[l].min(inv_floor);
                        lanes[l] = if ratio > lanes[l] { ratio } else { lanes[l] };
                    }
                }
                for (e, inv) in e4.remainder().iter().zip(inv4.remainder()) {
                    let ratio = e * inv.min(inv_floor);
                    lanes[0] = if ratio > lanes[0] { ratio } else { lanes[0] };
                }
            }
            rho[c] = lanes.into_iter().fold(rho[c], f64::max);
        }
        rho
    }

    /// The conductors that must be evaluated in a scenario whose field rose by `rho`, given
    /// the worst margin `worst` found so far (None: every conductor).
    pub(super) fn needed(&self, rho: &[f64], worst: Option<f64>) -> Vec<bool> {
        self.nominal
            .iter()
            .zip(rho)
            .map(|(m, r)| match (m, worst) {
                (Some(m), Some(w)) => {
                    let bound = m / (r * SAFETY);
                    bound.is_nan() || bound <= w
                }
                _ => true,
            })
            .collect()
    }

    /// The conductors evaluated whatever the worst margin: those without a nominal bound.
    pub(super) fn always(&self, rho: &[f64]) -> Vec<bool> {
        self.nominal
            .iter()
            .zip(rho)
            .map(|(m, r)| m.is_none() || !r.is_finite())
            .collect()
    }

    /// The lower bound of each conductor's margins in a scenario with field rise `rho`.
    pub(super) fn bounds(&self, rho: &[f64]) -> Vec<Option<f64>> {
        self.nominal
            .iter()
            .zip(rho)
            .map(|(m, r)| m.map(|m| m / (r * SAFETY)))
            .collect()
    }
}

/// |E| at the marked free nodes of the field loaded in `work` (0 elsewhere), read from its
/// node-field table (formed here when the scenario's margins have not formed it yet, and kept
/// for them).
fn node_magnitudes(model: &Model, work: &Analysis, marked: &[bool]) -> Vec<f64> {
    let fm = FieldMap::sharing(
        &work.mesh,
        model,
        &work.solution.phi,
        &work.potentials,
        &work.node_fields,
    );
    fm.node_fields()
        .iter()
        .zip(marked)
        .map(|(e, &m)| {
            if m {
                crate::geometry::magnitude(e[0], e[1])
            } else {
                0.0
            }
        })
        .collect()
}

/// The worst row of a set: the smallest margin, the first of equal ones in ranked order.
pub(super) fn worst_row(rows: &[MarginRow]) -> Option<&MarginRow> {
    rows.iter().filter(|r| r.margin.is_some()).min_by(|a, b| {
        a.margin
            .unwrap_or(f64::INFINITY)
            .total_cmp(&b.margin.unwrap_or(f64::INFINITY))
    })
}

/// True when the smallest margin of `rows` is held by more than one row (the choice between
/// them then depends on the order a full evaluation makes them in).
pub(super) fn tied(rows: &[MarginRow]) -> bool {
    let Some(w) = worst_row(rows).and_then(|r| r.margin) else {
        return false;
    };
    rows.iter().filter(|r| r.margin == Some(w)).count() > 1
}
