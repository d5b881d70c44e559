//! The superposition basis: one unit-potential solve per electrode on one mesh, held on the
//! free nodes, with the capacitance matrix; any set of electrode potentials is then a weighted
//! sum instead of a new solve.

use super::*;

/// An electrode solved in turn (index and groups), with the electrode that mirrors it, solved
/// right after it from its solution reflected.
type Primary<'g> = (usize, &'g Electrode, Option<(usize, &'g Electrode)>);

/// Runs of unit solves the basis makes side by side (fixed, so that the warm starts and hence
/// the basis do not depend on the machine's thread count).
pub(super) const BASIS_STREAMS: usize = 2;

/// Free nodes summed together in one block of a superposition, so that the blocks of the
/// results stay in cache while every unit solution streams through them once; the unit
/// solutions are stored by the same blocks ([`unit_row`]).
pub(super) const SUM_BLOCK: usize = 2048;

/// Where the values of unit solution `e` (of `units`) on free nodes `start..start + len` lie
/// in the basis's storage: block by block of [`SUM_BLOCK`] free nodes (`start` the first free
/// node of a block, `len` its length), each block every unit solution in turn.
fn unit_row(start: usize, len: usize, units: usize, e: usize) -> std::ops::Range<usize> {
    let at = start * units + e * len;
    at..at + len
}

/// The unit-potential solutions of the electrodes, with their capacitance matrix.
///
/// Each unit solution is held on the free nodes only (a fixed node's potential is its
/// conductor's) and in single precision: its rounding, 6e-8 of the unit potential, lies far
/// below the solver's own error and the discretisation error (src/verification/faults.rs
/// `basis_field_equals_a_direct_solve` measures the whole difference against direct solves).
/// The sums are formed in double precision.
pub struct Basis {
    pub electrodes: Vec<Electrode>,
    /// Electrode of each conductor (None for grounded conductors).
    pub conductor_electrode: Vec<Option<usize>>,
    /// Mesh nodes that are free, in order; the unit solutions are stored on these.
    free: Vec<u32>,
    /// Fixed id of every mesh node (`FixedId::FREE` for a free node).
    fixed: Vec<crate::mesh::FixedId>,
    /// The unit solutions on the free nodes, block by block of [`SUM_BLOCK`] free nodes:
    /// block b holds every electrode's values on its free nodes, electrode after electrode,
    /// so that a superposition reads the memory straight through.
    blocks: Vec<f32>,
    /// Number of electrodes (unit solutions) in `blocks`.
    units: usize,
    pub capacitance: CapacitanceMatrix,
    /// The surface samples of the mesh, placed once for every field formed from the basis.
    pub surface_plan: crate::field::SurfacePlan,
    /// Figures of the last unit solve (for the analyses formed from the basis).
    pub info: SolveInfo,
}

impl Basis {
    /// One unit solve per electrode on `mesh`, reusing one operator and hierarchy.
    pub fn build(model: &Model, mesh: &Mesh, params: &SolverParams) -> Result<Basis, FaultError> {
        Self::build_within(model, mesh, params, crate::mesh::Budget::of_machine())
    }

    /// As [`Basis::build`], refusing a basis that would not fit `budget`.
    pub(crate) fn build_within(
        model: &Model,
        mesh: &Mesh,
        params: &SolverParams,
        budget: crate::mesh::Budget,
    ) -> Result<Basis, FaultError> {
        let groups = electrodes(model);
        let n = groups.len();
        let free: Vec<u32> = (0..mesh.nodes())
            .filter(|&k| mesh.fixed[k].is_free())
            .map(|k| k as u32)
            .collect();
        // The unit solutions (single precision, free nodes), plus one field per worker thread
        // while the scenarios run.
        let need = (n * free.len() * 4 + rayon::current_num_threads() * mesh.nodes() * 8) as f64;
        if need > budget.bytes() {
            return Err(FaultError::TooLarge {
                electrodes: n,
                nodes: mesh.nodes(),
                gib: need / (1024.0 * 1024.0 * 1024.0),
                budget: budget.describe(),
            });
        }
        let mut conductor_electrode = vec![None; model.conductors.len()];
        for (e, g) in groups.iter().enumerate() {
            for &k in &g.conductors {
                conductor_electrode[k] = Some(e);
            }
        }
        // The unit solves run in BASIS_STREAMS contiguous runs side by side, all on one
        // operator and one multigrid hierarchy, set up once (each run has its own copy of the
        // hierarchy's work vectors), and each solve warm-started from the previous one of its
        // run. An electrode that is the mirror image of an earlier one in a grid symmetric in
        // z (the two columns of a tandem) is solved right after it, from its solution
        // mirrored. The split does not depend on the thread count, so the basis is the same
        // everywhere.
        let partner = mirror_partners(model, mesh, &groups);
        let primaries: Vec<Primary> = groups
            .iter()
            .enumerate()
            .filter(|(j, _)| partner[*j].is_none())
            .map(|(j, g)| {
                let follower = (0..n).find(|&f| partner[f] == Some(j));
                (j, g, follower.map(|f| (f, &groups[f])))
            })
            .collect();
        let per = primaries.len().div_ceil(BASIS_STREAMS).max(1);
        let runs: Vec<_> = primaries.chunks(per).map(|c| c.to_vec()).collect();
        // One solver per run: the set-up one and copies of it (no idle original kept).
        let setup = Solver::new(mesh, *params);
        let mut solvers: Vec<Solver> = (1..runs.len()).map(|_| setup.clone()).collect();
        solvers.push(setup);
        let free_ref = &free;
        let nf = free.len();
        let blocks = std::sync::Mutex::new(vec![0.0f32; n * nf]);
        let blocks_ref = &blocks;
        type Unit = (usize, Vec<f64>, SolveInfo);
        let solved: Vec<Vec<Unit>> = runs
            .par_iter()
            .zip(solvers)
            .map(|(run, mut solver)| -> Result<Vec<Unit>, FaultError> {
                let mut out: Vec<Unit> = Vec::with_capacity(2 * run.len());
                let mut unit = |j: usize, g: &Electrode, start: Option<&[f64]>| {
                    let mut pots = vec![0.0; model.conductors.len()];
                    for &k in &g.conductors {
                        pots[k] = 1.0;
                    }
                    let sol = solver.solve(&pots, start)?;
                    let q = conductor_charges(mesh, &sol.phi, &pots);
                    // (A lock is poisoned only by a panic, which the parallel run passes on.)
                    let mut blocks = blocks_ref
                        .lock()
                        .unwrap_or_else(std::sync::PoisonError::into_inner);
                    for (b, chunk) in free_ref.chunks(SUM_BLOCK).enumerate() {
                        let row = unit_row(b * SUM_BLOCK, chunk.len(), n, j);
                        for (o, &k) in blocks[row].iter_mut().zip(chunk) {
                            *o = sol.phi[k as usize] as f32;
                        }
                    }
                    drop(blocks);
                    out.push((j, q, sol.info));
                    Ok::<_, FaultError>(sol.phi)
                };
                // The previous electrode of this run and its unit solution.
                let mut last: Option<(&Electrode, Vec<f64>)> = None;
                for &(j, g, follower) in run {
                    // The previous unit solution moved with the electrode where the column
                    // repeats (a third fewer iterations on the tandem), else as it is.
                    let moved = last
                        .as_ref()
                        .and_then(|(e, phi)| shifted_start(model, mesh, e, g, phi));
                    let start = moved.as_deref().or(last.as_ref().map(|(_, phi)| &phi[..]));
                    let phi = unit(j, g, start)?;
                    if let Some((f, mirror)) = follower {
                        unit(f, mirror, Some(&mirrored_in_z(mesh, &phi)))?;
                    }
                    last = Some((g, phi));
                }
                Ok(out)
            })
            .collect::<Result<_, _>>()?;
        let mut solved: Vec<Unit> = solved.into_iter().flatten().collect();
        solved.sort_by_key(|u| u.0);
        let mut c_f = vec![vec![0.0; n]; n];
        let mut iterations = 0;
        let mut info = None;
        for (j, q, unit_info) in solved {
            iterations += unit_info.iterations;
            for (i, gi) in groups.iter().enumerate() {
                c_f[i][j] = gi.conductors.iter().map(|&k| q[k]).sum();
            }
            info = Some(unit_info);
        }
        let blocks = blocks
            .into_inner()
            .unwrap_or_else(std::sync::PoisonError::into_inner);
        let Some(info) = info else {
            return Err(TransientError::NothingOffEarth.into());
        };
        let scale = (0..n).map(|i| c_f[i][i].abs()).fold(0.0, f64::max);
        let mut asymmetry: f64 = 0.0;
        for (i, row) in c_f.iter().enumerate() {
            for (j, &cij) in row.iter().enumerate().take(i) {
                asymmetry = asymmetry.max((cij - c_f[j][i]).abs());
            }
        }
        Ok(Basis {
            electrodes: groups.clone(),
            conductor_electrode,
            free,
            fixed: mesh.fixed.clone(),
            blocks,
            units: n,
            capacitance: CapacitanceMatrix {
                electrodes: groups,
                c_f,
                asymmetry: if scale > 0.0 { asymmetry / scale } else { 0.0 },
                iterations,
            },
            surface_plan: crate::field::SurfacePlan::of(mesh, model),
            info,
        })
    }

    /// Electrode potentials from conductor potentials (the first conductor of each electrode).
    pub fn electrode_potentials(&self, potentials: &[f64]) -> Vec<f64> {
        self.electrodes
            .iter()
            .map(|e| {
                e.conductors
                    .first()
                    .and_then(|&k| potentials.get(k))
                    .copied()
                    .unwrap_or(0.0)
            })
            .collect()
    }

    /// Conductor potentials from electrode potentials (grounded conductors at 0).
    pub fn conductor_potentials(&self, electrode_v: &[f64]) -> Vec<f64> {
        self.conductor_electrode
            .iter()
            .map(|e| e.and_then(|e| electrode_v.get(e)).copied().unwrap_or(0.0))
            .collect()
    }

    /// The field of the given electrode potentials: φ = Σ_e V_e φ_e.
    pub fn field(&self, electrode_v: &[f64]) -> Vec<f64> {
        let zero_v = vec![0.0; self.electrodes.len()];
        let zero_phi = vec![0.0; self.fixed.len()];
        self.field_from(&zero_phi, &zero_v, electrode_v)
    }

    /// The field of `electrode_v` from a known one, `base_phi` at `base_v`: φ = φ_base +
    /// Σ_e (V_e − V_base,e) φ_e over the electrodes whose potential differs, which for a
    /// fault in one column of several leaves the others out of the sum.
    pub fn field_from(&self, base_phi: &[f64], base_v: &[f64], electrode_v: &[f64]) -> Vec<f64> {
        self.fields_from(
            base_phi,
            base_v,
            std::slice::from_ref(&electrode_v.to_vec()),
        )
        .pop()
        .unwrap_or_default()
    }

    /// The fields of many sets of electrode potentials from one known field, as
    /// [`Basis::field_from`] for each: every unit solution streams through memory once for the
    /// whole set (block by block of free nodes, the blocks in parallel), not once per field.
    pub fn fields_from(
        &self,
        base_phi: &[f64],
        base_v: &[f64],
        sets: &[Vec<f64>],
    ) -> Vec<Vec<f64>> {
        let ne = self.units;
        // Weights per set and electrode, and the electrodes any set moves.
        let weights: Vec<Vec<f64>> = sets
            .iter()
            .map(|ev| {
                (0..ne)
                    .map(|e| {
                        let v = ev.get(e).copied().unwrap_or(0.0);
                        let b = base_v.get(e).copied().unwrap_or(0.0);
                        if v != b { v - b } else { 0.0 }
                    })
                    .collect()
            })
            .collect();
        let moved: Vec<usize> = (0..ne)
            .filter(|&e| weights.iter().any(|w| w[e] != 0.0))
            .collect();
        let m = sets.len();
        let nf = self.free.len();
        // Sums on the free nodes, laid out block by block: block b holds the m partial sums
        // of its free nodes one after another.
        let mut acc = vec![0.0f64; nf * m];
        let kernel = |(b, chunk): (usize, &mut [f64])| {
            let start = b * SUM_BLOCK;
            let len = SUM_BLOCK.min(nf - start);
            // Four unit solutions at a time, so that each partial sum is read and written
            // once per four terms.
            for group in moved.chunks(4) {
                let p: [&[f32]; 4] = std::array::from_fn(|q| {
                    &self.blocks[unit_row(start, len, ne, group[q.min(group.len() - 1)])]
                });
                for (s, w) in weights.iter().enumerate() {
                    let w: [f64; 4] = std::array::from_fn(|q| group.get(q).map_or(0.0, |&e| w[e]));
                    if w.iter().all(|&x| x == 0.0) {
                        continue;
                    }
                    add_four(&mut chunk[s * len..(s + 1) * len], p, w);
                }
            }
        };
        acc.par_chunks_mut(SUM_BLOCK * m.max(1))
            .enumerate()
            .for_each(kernel);
        let fixed_shift = |k: usize, w: &[f64]| -> f64 {
            let Some(c) = self.fixed[k].conductor_index() else {
                return 0.0;
            };
            self.conductor_electrode
                .get(c)
                .copied()
                .flatten()
                .map_or(0.0, |e| w[e])
        };
        weights
            .par_iter()
            .enumerate()
            .map(|(s, w)| {
                let mut out = base_phi.to_vec();
                for (k, o) in out.iter_mut().enumerate() {
                    *o += fixed_shift(k, w);
                }
                for (f, &k) in self.free.iter().enumerate() {
                    let (b, i) = (f / SUM_BLOCK, f % SUM_BLOCK);
                    let len = SUM_BLOCK.min(nf - b * SUM_BLOCK);
                    out[k as usize] += acc[b * SUM_BLOCK * m + s * len + i];
                }
                out
            })
            .collect()
    }

    /// Electrostatic energy of the electrodes at the given potentials, ½ VᵀCV, J.
    pub fn energy_j(&self, electrode_v: &[f64]) -> f64 {
        quadratic(&self.capacitance.c_f, electrode_v)
    }

    /// Bytes held by the unit solutions.
    pub fn memory_bytes(&self) -> usize {
        self.blocks.len() * 4 + self.free.len() * 4
    }
}

pub(super) fn quadratic(c: &[Vec<f64>], v: &[f64]) -> f64 {
    let mut e = 0.0;
    for (row, vi) in c.iter().zip(v) {
        for (cij, vj) in row.iter().zip(v) {
            e += vi * cij * vj;
        }
    }
    0.5 * e
}

/// A start for the unit solve of electrode `to` from the unit solution `phi` of electrode
/// `from` when `to` is `from` moved along z (the same box, shifted) and the grid repeats with
/// that move around them: `phi` shifted by the rows between them (zero in the rows it does
/// not cover). In a column of equal electrodes between grounded neighbours the unit field is
/// nearly the same field moved by one pitch, so the start is already close except near the
/// column's ends and the tank (tandem example: 956 iterations for its 159 unit solves with the
/// previous solution as the start, 617 with this one). Only the start changes: each solve
/// still meets the solver's tolerance.
fn shifted_start(
    model: &Model,
    mesh: &Mesh,
    from: &Electrode,
    to: &Electrode,
    phi: &[f64],
) -> Option<Vec<f64>> {
    let (&a, &b) = (from.conductors.first()?, to.conductors.first()?);
    let (ba, bb) = (
        model.conductors[a].shape.bbox(),
        model.conductors[b].shape.bbox(),
    );
    let tol = 1e-9 * (1.0 + ba.z_max.abs());
    if (ba.r_min - bb.r_min).abs() > tol
        || (ba.r_max - bb.r_max).abs() > tol
        || ((ba.z_max - ba.z_min) - (bb.z_max - bb.z_min)).abs() > tol
    {
        return None;
    }
    let dz = bb.z_min - ba.z_min;
    let z = &mesh.z.x;
    let (ja, jb) = (mesh.z.locate(ba.z_min), mesh.z.locate(bb.z_min));
    let shift = jb as i64 - ja as i64;
    // The rows around the first electrode must repeat with the move.
    let reach = (shift.unsigned_abs() as usize).max(4);
    let lo = ja.saturating_sub(reach);
    let hi = (ja + reach).min(z.len() - 1);
    for j in lo..=hi {
        let k = j as i64 + shift;
        if k < 0
            || k as usize >= z.len()
            || (z[k as usize] - z[j] - dz).abs() > 1e-6 * dz.abs().max(1e-9)
        {
            return None;
        }
    }
    let nr = mesh.nr();
    let mut out = vec![0.0; phi.len()];
    for j in 0..z.len() {
        let src = j as i64 - shift;
        if src >= 0 && (src as usize) < z.len() {
            let s = src as usize;
            out[j * nr..(j + 1) * nr].copy_from_slice(&phi[s * nr..(s + 1) * nr]);
        }
    }
    Some(out)
}

/// For each electrode, the earlier electrode it is the mirror image of, in a grid whose z
/// lines are symmetric about their middle plane (to a thousandth of the smallest spacing: the
/// reflected solution is only a start): the same number of conductors, each with the bounding
/// box of its counterpart reflected in that plane. Each electrode pairs at most once, and only
/// with one that pairs with no earlier electrode itself. None everywhere when the grid is not
/// symmetric.
pub(crate) fn mirror_partners(
    model: &Model,
    mesh: &Mesh,
    groups: &[Electrode],
) -> Vec<Option<usize>> {
    let n = groups.len();
    let mut partner = vec![None; n];
    let z = &mesh.z.x;
    let last = z.len() - 1;
    let middle = 0.5 * (z[0] + z[last]);
    let grid_tol = 1e-3 * mesh.z.spacing_range().0;
    if (0..=last).any(|j| (z[j] + z[last - j] - 2.0 * middle).abs() > grid_tol) {
        return partner;
    }
    let tol = 1e-9 * (z[last] - z[0]).abs();
    let close = |a: f64, b: f64| (a - b).abs() <= tol;
    let mirrors = |a: &Electrode, b: &Electrode| {
        a.conductors.len() == b.conductors.len()
            && a.conductors.iter().zip(&b.conductors).all(|(&p, &q)| {
                let (bp, bq) = (
                    model.conductors[p].shape.bbox(),
                    model.conductors[q].shape.bbox(),
                );
                close(bp.r_min, bq.r_min)
                    && close(bp.r_max, bq.r_max)
                    && close(bp.z_min, 2.0 * middle - bq.z_max)
                    && close(bp.z_max, 2.0 * middle - bq.z_min)
            })
    };
    let mut taken = vec![false; n];
    for j in 0..n {
        if let Some(i) =
            (0..j).find(|&i| partner[i].is_none() && !taken[i] && mirrors(&groups[i], &groups[j]))
        {
            partner[j] = Some(i);
            taken[i] = true;
        }
    }
    partner
}

/// A field reflected in the middle plane of a grid symmetric in z: row j takes row nz − 1 − j.
pub(crate) fn mirrored_in_z(mesh: &Mesh, phi: &[f64]) -> Vec<f64> {
    let (nr, nz) = (mesh.nr(), mesh.nz());
    let mut out = vec![0.0; phi.len()];
    for j in 0..nz {
        let src = (nz - 1 - j) * nr;
        out[j * nr..(j + 1) * nr].copy_from_slice(&phi[src..src + nr]);
    }
    out
}

/// `out[i] += Σ_q w[q]·p[q][i]` for four unit solutions, in double precision: with AVX2 where
/// the processor has it (the same operations in the same order, so the same sums), else in
/// the baseline instruction set.
fn add_four(out: &mut [f64], p: [&[f32]; 4], w: [f64; 4]) {
    #[cfg(target_arch = "x86_64")]
    if std::arch::is_x86_feature_detected!("avx2") {
        // SAFETY: the processor has AVX2, checked just above.
        unsafe { add_four_avx2(out, p, w) };
        return;
    }
    add_four_plain(out, p, w);
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
fn add_four_avx2(out: &mut [f64], p: [&[f32]; 4], w: [f64; 4]) {
    add_four_plain(out, p, w);
}

#[inline(always)]
fn add_four_plain(out: &mut [f64], p: [&[f32]; 4], w: [f64; 4]) {
    let n = out.len();
    let (p0, p1, p2, p3) = (&p[0][..n], &p[1][..n], &p[2][..n], &p[3][..n]);
    for (i, o) in out.iter_mut().enumerate() {
        *o += (w[0] * f64::from(p0[i]) + w[1] * f64::from(p1[i]))
            + (w[2] * f64::from(p2[i]) + w[3] * f64::from(p3[i]));
    }
}
