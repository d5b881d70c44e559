//! The field-map figures of the review note, written as SVG by hand: |E| in colour with a
//! colour bar in kV/mm, labelled equipotentials (kV), and the modelled parts drawn from their
//! true outlines (conductors solid grey, dielectrics tinted brown, vacuum regions tinted blue
//! with a dashed edge), over the whole tank and zoomed around the worst hotspot.
//!
//! Input: the model, the fine analysis' field map and the report. Output: SVG documents. The
//! field is only sampled here (`FieldMap::at`), never computed.

use crate::analysis::Analysis;
use crate::field::FieldMap;
use crate::geometry::{Point, Shape};
use crate::model::{Model, Tank};
use crate::report::Report;
use crate::report::plot::{PlotError, PlotResult};
use crate::report::svg::{Canvas, View, heat, nice_step, outline, path, tick, tick_mark, ticks};
use std::fmt::Write;

/// |E| (V/m) at cell centres and the potential (V) at cell corners of a raster over the view;
/// `None` for a cell centre inside a conductor.
struct Raster {
    nr: usize,
    nz: usize,
    e: Vec<Option<f64>>,
    phi: Vec<f64>,
}

impl Raster {
    fn sample(model: &Model, fm: &FieldMap, v: View, nr: usize, nz: usize) -> Raster {
        let (dr, dz) = ((v.r1 - v.r0) / nr as f64, (v.z1 - v.z0) / nz as f64);
        let mut e = Vec::with_capacity(nr * nz);
        for j in 0..nz {
            for i in 0..nr {
                let p = Point::new(v.r0 + (i as f64 + 0.5) * dr, v.z0 + (j as f64 + 0.5) * dz);
                let inside = model.tank.sdf_inside(p) > 0.0
                    || model.conductors.iter().any(|c| c.shape.contains(p));
                e.push((!inside).then(|| {
                    let f = fm.at(p).field;
                    f[0].hypot(f[1])
                }));
            }
        }
        let mut phi = Vec::with_capacity((nr + 1) * (nz + 1));
        for j in 0..=nz {
            for i in 0..=nr {
                let p = Point::new(v.r0 + i as f64 * dr, v.z0 + j as f64 * dz);
                phi.push(fm.at(p).potential_v);
            }
        }
        Raster { nr, nz, e, phi }
    }

    /// Segments (r, z) where the corner potentials cross `level`, by marching squares.
    fn contour(&self, v: View, level: f64) -> Vec<(Point, Point)> {
        let (nr, nz) = (self.nr, self.nz);
        let (dr, dz) = ((v.r1 - v.r0) / nr as f64, (v.z1 - v.z0) / nz as f64);
        let at = |i: usize, j: usize| self.phi[j * (nr + 1) + i];
        let mut out = Vec::new();
        for j in 0..nz {
            for i in 0..nr {
                let c = [(i, j), (i + 1, j), (i + 1, j + 1), (i, j + 1)];
                let mut pts = Vec::new();
                for k in 0..4 {
                    let ((ia, ja), (ib, jb)) = (c[k], c[(k + 1) % 4]);
                    let (va, vb) = (at(ia, ja), at(ib, jb));
                    if (va - level) * (vb - level) < 0.0 {
                        let t = (level - va) / (vb - va);
                        pts.push(Point::new(
                            v.r0 + (ia as f64 + t * (ib as f64 - ia as f64)) * dr,
                            v.z0 + (ja as f64 + t * (jb as f64 - ja as f64)) * dz,
                        ));
                    }
                }
                if pts.len() >= 2 {
                    out.push((pts[0], pts[1]));
                }
                if pts.len() == 4 {
                    out.push((pts[2], pts[3]));
                }
            }
        }
        out
    }
}

/// A figure to draw: the window, the page size, the raster, the title and the hotspot.
struct Spec<'a> {
    /// Distinguishes the figure's clip path from another figure's on the same page.
    id: &'a str,
    view: View,
    max_w: f64,
    max_h: f64,
    cell_px: f64,
    title: &'a str,
    hotspot: Option<(Point, String)>,
}

fn draw(model: &Model, fm: &FieldMap, spec: Spec<'_>) -> PlotResult {
    let cv = Canvas::new(spec.view, spec.max_w, spec.max_h);
    let v = cv.view;
    let nr = ((cv.w / spec.cell_px).round() as usize).max(8);
    let nz = ((cv.h / spec.cell_px).round() as usize).max(8);
    let raster = Raster::sample(model, fm, v, nr, nz);
    let emax = raster.e.iter().flatten().cloned().fold(0.0, f64::max);
    if !(emax.is_finite() && emax > 0.0) {
        return Err(PlotError {
            reason: "the field is zero everywhere in the window of the field map".into(),
        });
    }
    let (page_w, page_h) = cv.page();
    let mut svg = format!(
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{page_w:.0}\" height=\"{page_h:.0}\" \
         viewBox=\"0 0 {page_w:.0} {page_h:.0}\" font-family=\"sans-serif\" font-size=\"11\">\n\
         <rect width=\"100%\" height=\"100%\" fill=\"white\"/>\n\
         <text x=\"{:.0}\" y=\"18\" font-size=\"14\">{}</text>\n",
        cv.left,
        crate::report::html::escape(spec.title)
    );
    legend(&mut svg, &cv);
    let _ = writeln!(
        svg,
        "<clipPath id=\"plot-{id}\"><rect x=\"{:.2}\" y=\"{:.2}\" width=\"{:.2}\" height=\"{:.2}\"/></clipPath>\n<g clip-path=\"url(#plot-{id})\">",
        cv.left,
        cv.top,
        cv.w,
        cv.h,
        id = spec.id
    );
    // |E| in colour, one rectangle per run of equal colour along a row.
    let (pw, ph) = (cv.w / nr as f64, cv.h / nz as f64);
    let levels = 48.0;
    for j in 0..nz {
        let mut i = 0;
        while i < nr {
            let Some(e) = raster.e[j * nr + i] else {
                i += 1;
                continue;
            };
            let q = (e / emax * levels).round();
            let mut k = i + 1;
            while k < nr && raster.e[j * nr + k].is_some_and(|x| (x / emax * levels).round() == q) {
                k += 1;
            }
            let (r, g, b) = heat(q / levels);
            let _ = writeln!(
                svg,
                "<rect x=\"{:.2}\" y=\"{:.2}\" width=\"{:.2}\" height=\"{:.2}\" fill=\"rgb({r},{g},{b})\"/>",
                cv.left + i as f64 * pw,
                cv.top + cv.h - (j + 1) as f64 * ph,
                (k - i) as f64 * pw + 0.4,
                ph + 0.4
            );
            i = k;
        }
    }
    equipotentials(&mut svg, &cv, &raster, model);
    parts(&mut svg, &cv, model);
    svg.push_str("</g>\n");
    if let Some((p, label)) = &spec.hotspot {
        let (x, y) = (cv.x(p.r), cv.y(p.z));
        let _ = writeln!(
            svg,
            "<g class=\"hotspot\"><circle cx=\"{x:.2}\" cy=\"{y:.2}\" r=\"7\" fill=\"none\" stroke=\"#d00000\" stroke-width=\"2.5\"/>\
             <text x=\"{:.2}\" y=\"{:.2}\" fill=\"#d00000\" font-weight=\"bold\" stroke=\"white\" stroke-width=\"3\" paint-order=\"stroke\">{}</text></g>",
            (x + 10.0).min(cv.left + cv.w - 40.0),
            y - 10.0,
            crate::report::html::escape(label)
        );
    }
    axes(&mut svg, &cv);
    colour_bar(&mut svg, &cv, emax);
    svg.push_str("</svg>\n");
    Ok(svg)
}

/// The key to the drawing, under the title.
fn legend(svg: &mut String, cv: &Canvas) {
    let y = 34.0;
    let mut x = cv.left;
    for (fill, stroke, dash, label) in [
        ("#8c8c8c", "#222", "", "conductor"),
        ("rgba(217,179,108,0.45)", "#7a4a10", "", "dielectric"),
        ("rgba(159,197,255,0.45)", "#1e3cc8", "4 2", "vacuum"),
    ] {
        let _ = writeln!(
            svg,
            "<rect x=\"{x:.0}\" y=\"{:.0}\" width=\"14\" height=\"10\" fill=\"{fill}\" stroke=\"{stroke}\" stroke-dasharray=\"{dash}\"/><text x=\"{:.0}\" y=\"{y:.0}\">{label}</text>",
            y - 9.0,
            x + 18.0
        );
        x += 30.0 + 6.5 * label.len() as f64;
    }
    let _ = writeln!(
        svg,
        "<line x1=\"{x:.0}\" y1=\"{:.0}\" x2=\"{:.0}\" y2=\"{:.0}\" stroke=\"white\" stroke-width=\"3\"/><line x1=\"{x:.0}\" y1=\"{:.0}\" x2=\"{:.0}\" y2=\"{:.0}\" stroke=\"#222\" stroke-width=\"1\"/><text x=\"{:.0}\" y=\"{y:.0}\">equipotential (kV)</text>",
        y - 4.0,
        x + 16.0,
        y - 4.0,
        y - 4.0,
        x + 16.0,
        y - 4.0,
        x + 20.0
    );
}

/// Equipotentials at round kV steps between ground and the terminal, each labelled once.
fn equipotentials(svg: &mut String, cv: &Canvas, raster: &Raster, model: &Model) {
    let (lo, hi) = raster
        .phi
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
            (a.min(x), b.max(x))
        });
    let full = model.terminal_voltage.abs().max(hi.abs()).max(lo.abs());
    if hi <= lo || full <= 0.0 {
        return;
    }
    // Steps of the terminal voltage when the window sees most of it, finer in a zoom.
    let step = nice_step(hi - lo, 10.0);
    let first = (lo / step).ceil() as i64;
    let mut placed: Vec<(f64, f64)> = Vec::new();
    let last = (hi / step).floor() as i64;
    for k in first..=last {
        let level = k as f64 * step;
        // Levels at the extremes are the electrodes' own surfaces.
        if level <= lo + 0.01 * (hi - lo) || level >= hi - 0.01 * (hi - lo) {
            continue;
        }
        let segs = raster.contour(cv.view, level);
        if segs.is_empty() {
            continue;
        }
        let mut d = String::new();
        for (a, b) in &segs {
            let _ = write!(
                d,
                "M{:.2},{:.2}L{:.2},{:.2}",
                cv.x(a.r),
                cv.y(a.z),
                cv.x(b.r),
                cv.y(b.z)
            );
        }
        let _ = writeln!(
            svg,
            "<path d=\"{d}\" fill=\"none\" stroke=\"white\" stroke-width=\"1.6\" stroke-opacity=\"0.9\"/><path d=\"{d}\" fill=\"none\" stroke=\"#222\" stroke-width=\"0.6\"/>"
        );
        // The label goes where it is farthest from the labels already placed and from the
        // frame, so that labels of neighbouring levels do not pile up.
        let stride = (segs.len() / 300).max(1);
        let best = segs
            .iter()
            .step_by(stride)
            .map(|(a, b)| {
                let (x, y) = (0.5 * (cv.x(a.r) + cv.x(b.r)), 0.5 * (cv.y(a.z) + cv.y(b.z)));
                let from_labels = placed
                    .iter()
                    .map(|(px, py): &(f64, f64)| (px - x).hypot(py - y))
                    .fold(160.0, f64::min);
                let from_frame = (x - cv.left - 10.0)
                    .min(cv.left + cv.w - 50.0 - x)
                    .min(y - cv.top - 12.0)
                    .min(cv.top + cv.h - 6.0 - y);
                (from_labels.min(3.0 * from_frame), x, y)
            })
            .max_by(|p, q| p.0.total_cmp(&q.0));
        if let Some((_, x, y)) = best {
            placed.push((x, y));
            let _ = writeln!(
                svg,
                "<text class=\"equipotential-label\" x=\"{:.2}\" y=\"{:.2}\" font-size=\"10\" fill=\"#111\" stroke=\"white\" stroke-width=\"3\" paint-order=\"stroke\">{} kV</text>",
                x + 2.0,
                y - 2.0,
                tick(level / 1e3, step / 1e3)
            );
        }
    }
}

/// The parts from their true outlines: dielectrics, vacuum regions, conductors, tank wall.
fn parts(svg: &mut String, cv: &Canvas, model: &Model) {
    for d in &model.dielectrics {
        let _ = writeln!(
            svg,
            "<path class=\"dielectric\" d=\"{}\" fill=\"rgb(217,179,108)\" fill-opacity=\"0.45\" stroke=\"#7a4a10\" stroke-width=\"1.2\"/>",
            path(cv, &outline(&d.shape))
        );
    }
    for v in &model.vacuum {
        let _ = writeln!(
            svg,
            "<path class=\"vacuum\" d=\"{}\" fill=\"rgb(159,197,255)\" fill-opacity=\"0.45\" stroke=\"#1e3cc8\" stroke-width=\"1.2\" stroke-dasharray=\"5 3\"/>",
            path(cv, &outline(&v.shape))
        );
    }
    for c in &model.conductors {
        let _ = writeln!(
            svg,
            "<path class=\"conductor\" d=\"{}\" fill=\"#8c8c8c\" stroke=\"#222\" stroke-width=\"0.8\"/>",
            path(cv, &outline(&c.shape))
        );
    }
    let wall = match model.tank {
        Tank::Cylinder {
            inner_radius,
            length,
        } => vec![
            Point::new(0.0, 0.0),
            Point::new(inner_radius, 0.0),
            Point::new(inner_radius, length),
            Point::new(0.0, length),
        ],
        Tank::Sphere { inner_radius } => outline(&Shape::Sphere {
            center_z: inner_radius,
            radius: inner_radius,
        }),
    };
    let _ = writeln!(
        svg,
        "<path class=\"tank\" d=\"{}\" fill=\"none\" stroke=\"#000\" stroke-width=\"3\"/>",
        path(cv, &wall)
    );
}

/// Frame, ticks and axis titles in mm.
fn axes(svg: &mut String, cv: &Canvas) {
    let v = cv.view;
    let _ = writeln!(
        svg,
        "<rect x=\"{:.2}\" y=\"{:.2}\" width=\"{:.2}\" height=\"{:.2}\" fill=\"none\" stroke=\"#000\"/>",
        cv.left, cv.top, cv.w, cv.h
    );
    let step_r = nice_step((v.r1 - v.r0) * 1e3, (cv.w / 70.0).max(2.0));
    for r in ticks(v.r0 * 1e3, v.r1 * 1e3, step_r) {
        let (x, y) = (cv.x(r / 1e3), cv.top + cv.h);
        tick_mark(
            svg,
            (x, y, x, y + 5.0),
            (x, y + 17.0),
            "middle",
            &tick(r, step_r),
        );
    }
    let step_z = nice_step((v.z1 - v.z0) * 1e3, (cv.h / 60.0).max(2.0));
    for z in ticks(v.z0 * 1e3, v.z1 * 1e3, step_z) {
        let (x, y) = (cv.left, cv.y(z / 1e3));
        tick_mark(
            svg,
            (x - 5.0, y, x, y),
            (x - 7.0, y + 4.0),
            "end",
            &tick(z, step_z),
        );
    }
    let _ = writeln!(
        svg,
        "<text x=\"{:.2}\" y=\"{:.2}\" text-anchor=\"middle\">r (mm)</text><text transform=\"translate(14,{:.2}) rotate(-90)\" text-anchor=\"middle\">z (mm)</text>",
        cv.left + 0.5 * cv.w,
        cv.top + cv.h + 36.0,
        cv.top + 0.5 * cv.h
    );
}

/// The colour bar right of the plot, 0 to `emax`, in kV/mm.
fn colour_bar(svg: &mut String, cv: &Canvas, emax: f64) {
    let (x, w) = (cv.left + cv.w + 16.0, 16.0);
    let h = cv.h.clamp(120.0, 360.0);
    let y0 = cv.top;
    let _ = writeln!(svg, "<g class=\"colour-bar\">");
    let n = 64;
    for k in 0..n {
        let (r, g, b) = heat((k as f64 + 0.5) / n as f64);
        let _ = writeln!(
            svg,
            "<rect x=\"{x:.2}\" y=\"{:.2}\" width=\"{w}\" height=\"{:.2}\" fill=\"rgb({r},{g},{b})\"/>",
            y0 + h - (k + 1) as f64 * h / n as f64,
            h / n as f64 + 0.3
        );
    }
    let _ = writeln!(
        svg,
        "<rect x=\"{x:.2}\" y=\"{y0:.2}\" width=\"{w}\" height=\"{h:.2}\" fill=\"none\" stroke=\"#000\"/>"
    );
    let top = emax / 1e6;
    let step = nice_step(top, 5.0);
    for t in ticks(0.0, top, step) {
        let (y, at) = (y0 + h - t / top * h, x + w);
        tick_mark(
            svg,
            (at, y, at + 4.0, y),
            (at + 6.0, y + 4.0),
            "start",
            &tick(t, step),
        );
    }
    let _ = writeln!(
        svg,
        "<text x=\"{x:.2}\" y=\"{:.2}\">|E| kV/mm</text></g>",
        y0 + h + 16.0
    );
}

/// The whole tank: |E|, equipotentials and every part, the worst hotspot marked.
pub fn field_map(model: &Model, fine: &Analysis, report: &Report) -> PlotResult {
    let fm = fine.field_map(model);
    let b = model.tank.bbox();
    draw(
        model,
        &fm,
        Spec {
            id: "map",
            view: View {
                r0: b.r_min.max(0.0),
                r1: b.r_max,
                z0: b.z_min,
                z1: b.z_max,
            },
            max_w: 560.0,
            max_h: 1000.0,
            cell_px: 4.0,
            title: "|E| and equipotentials over the modelled geometry",
            hotspot: worst(report).map(|(p, _)| (p, "1".to_string())),
        },
    )
}

/// The place and name of the rank-1 margin row.
fn worst(report: &Report) -> Option<(Point, String)> {
    let r = report.margins.iter().find(|r| r.margin.is_some())?;
    Some((
        Point::new(r.at_m[0], r.at_m[1]),
        format!("1: {} — {}", r.item, r.criterion_label()),
    ))
}

/// A window around the worst hotspot: 1.2 times the distance to the nearest other surface
/// across (the gap it looks into), at least 10 mm and at most a quarter of the tank.
pub fn hotspot_zoom(model: &Model, fine: &Analysis, report: &Report) -> Option<PlotResult> {
    let (p, label) = worst(report)?;
    let b = model.tank.bbox();
    let tank = (b.r_max - b.r_min).max(b.z_max - b.z_min);
    let near = model
        .conductors
        .iter()
        .map(|c| c.shape.sdf(p))
        .filter(|d| *d > 1e-3)
        .fold(f64::INFINITY, f64::min)
        .min(-model.tank.sdf_inside(p));
    let half = (0.6 * near).clamp(0.01, 0.25 * tank);
    let view = View {
        r0: (p.r - half).max(0.0),
        r1: (p.r + half).min(b.r_max),
        z0: (p.z - half).max(b.z_min),
        z1: (p.z + half).min(b.z_max),
    };
    let fm = fine.field_map(model);
    Some(draw(
        model,
        &fm,
        Spec {
            id: "zoom",
            view,
            max_w: 520.0,
            max_h: 520.0,
            cell_px: 3.0,
            title: &format!(
                "Zoom around the worst hotspot (±{:.0} mm), rank {label}",
                half * 1e3
            ),
            hotspot: Some((p, "1".to_string())),
        },
    ))
}
