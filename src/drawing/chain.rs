//! Chaining loose pieces into closed loops, and the loops' pieces in running order.

use super::pieces::dist;
use super::{CHAIN_TOLERANCE, Ctx, DrawingError, Seg};
use crate::geometry::{Piece, Point};

/// A loop as indices into the segments in running order; an index `n + k` (for `n` segments)
/// is segment `k` run backwards.
pub(super) type Loop = Vec<usize>;

/// Chains the segments into closed loops. Each loop lists its segments in order; the sense of
/// each is restored by [`oriented`].
pub(super) fn chain(segs: &[Seg], ctx: &Ctx) -> Result<Vec<Loop>, Box<DrawingError>> {
    let tol = CHAIN_TOLERANCE;
    // Three or more ends at one point: no unique loop.
    let ends: Vec<(Point, usize)> = segs
        .iter()
        .enumerate()
        .flat_map(|(k, s)| [(s.piece.start(), k), (s.piece.end(), k)])
        .collect();
    for (i, (p, _)) in ends.iter().enumerate() {
        let near: Vec<usize> = ends
            .iter()
            .enumerate()
            .filter(|(j, (q, _))| *j != i && dist(*p, *q) <= tol)
            .map(|(_, (_, s))| *s)
            .collect();
        // A closed piece (a circle) meets itself once.
        let others = near.len() + 1;
        if others > 2 {
            let mut handles: Vec<String> = std::iter::once(ends[i].1)
                .chain(near)
                .map(|s| segs[s].handle.clone())
                .collect();
            handles.dedup();
            return Err(Box::new(DrawingError::Branching {
                file: ctx.file.into(),
                layer: ctx.layer.into(),
                count: others,
                handles,
                at: ctx.at(*p),
            }));
        }
    }
    // The first unused piece with an end at `p`, and whether it runs reversed: a piece that
    // continues a loop from `p` (`from_start`) should start there, one that leads into `p`
    // should end there; meeting `p` with its other end, it is walked backwards.
    let touching = |used: &[bool], p: Point, from_start: bool| {
        (0..segs.len()).find_map(|j| {
            if used[j] {
                return None;
            }
            let (a, b) = (segs[j].piece.start(), segs[j].piece.end());
            let (near, far) = if from_start { (a, b) } else { (b, a) };
            if dist(near, p) <= tol {
                Some((j, false))
            } else if dist(far, p) <= tol {
                Some((j, true))
            } else {
                None
            }
        })
    };
    let mut used = vec![false; segs.len()];
    let mut loops = Vec::new();
    for first in 0..segs.len() {
        if used[first] {
            continue;
        }
        used[first] = true;
        let mut lp: std::collections::VecDeque<(usize, bool)> = [(first, false)].into();
        let end_of = |(s, rev): (usize, bool)| {
            if rev {
                segs[s].piece.start()
            } else {
                segs[s].piece.end()
            }
        };
        let start_of = |(s, rev): (usize, bool)| {
            if rev {
                segs[s].piece.end()
            } else {
                segs[s].piece.start()
            }
        };
        loop {
            let (head, tail) = (lp[0], lp[lp.len() - 1]);
            if dist(end_of(tail), start_of(head)) <= tol {
                break;
            }
            if let Some(n) = touching(&used, end_of(tail), true) {
                used[n.0] = true;
                lp.push_back(n);
                continue;
            }
            if let Some(p) = touching(&used, start_of(head), false) {
                used[p.0] = true;
                lp.push_front(p);
                continue;
            }
            let (e, s) = (end_of(tail), start_of(head));
            return Err(Box::new(DrawingError::OpenLoop {
                file: ctx.file.into(),
                layer: ctx.layer.into(),
                gap: dist(e, s) / ctx.scale,
                tolerance: tol / ctx.scale,
                end_handle: segs[tail.0].handle.clone(),
                end_at: ctx.at(e),
                start_handle: segs[head.0].handle.clone(),
                start_at: ctx.at(s),
            }));
        }
        loops.push(
            lp.into_iter()
                .map(|(s, rev)| if rev { s + segs.len() } else { s })
                .collect(),
        );
    }
    Ok(loops)
}

/// The pieces of a loop in running order, each starting exactly where the one before ends.
pub(super) fn oriented(segs: &[Seg], lp: &Loop) -> Vec<Piece> {
    let n = segs.len();
    let mut out: Vec<Piece> = lp
        .iter()
        .map(|&i| {
            if i >= n {
                segs[i - n].piece.reversed()
            } else {
                segs[i].piece.clone()
            }
        })
        .collect();
    // Lines start exactly where the piece before ends; points within the tolerance of the axis
    // go onto it.
    let m = out.len();
    for k in 0..m {
        let before = out[(k + m - 1) % m].end();
        if let Piece::Line { a, b } = &mut out[k] {
            *a = before;
            for q in [a, b] {
                if q.r.abs() <= CHAIN_TOLERANCE {
                    q.r = 0.0;
                }
            }
        }
    }
    for k in 0..m {
        let after = out[(k + 1) % m].start();
        if let Piece::Line { b, .. } = &mut out[k] {
            *b = after;
        }
    }
    out
}

pub(super) fn seg_of(segs: &[Seg], i: usize) -> &Seg {
    &segs[i % segs.len()]
}

pub(super) fn loop_box(segs: &[Seg], lp: &Loop) -> (f64, f64, f64, f64) {
    let mut b = (
        f64::INFINITY,
        f64::NEG_INFINITY,
        f64::INFINITY,
        f64::NEG_INFINITY,
    );
    for &i in lp {
        let p = &seg_of(segs, i).piece;
        for t in 0..=8 {
            let q = p.at(t as f64 / 8.0);
            b.0 = b.0.min(q.r);
            b.1 = b.1.max(q.r);
            b.2 = b.2.min(q.z);
            b.3 = b.3.max(q.z);
        }
    }
    b
}
