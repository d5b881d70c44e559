//! SVG figures for the review note, drawn with plotters: the potential and |E| map with
//! equipotentials over the modelled geometry, the peak surface field of every conductor along
//! the column, and the margin bars with the design factor marked.
//!
//! Input: the fine analysis and the report. Output: SVG documents as strings.

use crate::analysis::Analysis;
use crate::model::Model;
use crate::report::Report;
use plotters::coord::types::RangedCoordf64;
use plotters::prelude::*;

/// A figure that cannot be drawn: reported, never silently dropped. The drawing library's
/// error is generic over its backend, so its message is kept.
#[derive(Debug, thiserror::Error)]
#[error("figure could not be drawn: {reason}")]
pub struct PlotError {
    pub reason: String,
}

/// An SVG figure, or why it cannot be drawn.
pub type PlotResult = Result<String, PlotError>;

fn err<E: std::fmt::Display>(e: E) -> PlotError {
    PlotError {
        reason: e.to_string(),
    }
}

/// Colour for a value in [0, 1]: dark blue → yellow, readable in print.
fn heat(t: f64) -> RGBColor {
    let t = t.clamp(0.0, 1.0);
    let stops = [
        (0.0, (20.0, 30.0, 90.0)),
        (0.35, (40.0, 110.0, 170.0)),
        (0.7, (110.0, 190.0, 120.0)),
        (1.0, (250.0, 230.0, 60.0)),
    ];
    let mut k = 0;
    while k + 2 < stops.len() && t > stops[k + 1].0 {
        k += 1;
    }
    let (t0, c0) = stops[k];
    let (t1, c1) = stops[k + 1];
    let f = ((t - t0) / (t1 - t0)).clamp(0.0, 1.0);
    let mix = |a: f64, b: f64| (a + f * (b - a)) as u8;
    RGBColor(mix(c0.0, c1.0), mix(c0.1, c1.1), mix(c0.2, c1.2))
}

/// The raster of the field map: `nr` × `nz` cells of `dr` × `dz` from (`r0`, `z0`), with
/// values at the (nr + 1) × (nz + 1) corners.
struct Raster {
    nr: usize,
    nz: usize,
    r0: f64,
    z0: f64,
    dr: f64,
    dz: f64,
    r_max: f64,
    z_max: f64,
}

impl Raster {
    fn corner(&self, i: usize, j: usize) -> crate::geometry::Point {
        crate::geometry::Point::new(
            (self.r0 + i as f64 * self.dr).min(self.r_max),
            (self.z0 + j as f64 * self.dz).min(self.z_max),
        )
    }

    /// Segments (in mm) where the corner values `v` cross `level`, by marching squares,
    /// skipping the cells marked in `skip`.
    fn contour(&self, v: &[f64], level: f64, skip: &[bool]) -> Vec<((f64, f64), (f64, f64))> {
        let (nr, nz) = (self.nr, self.nz);
        let at = |i: usize, j: usize| v[j * (nr + 1) + i];
        let mut out = Vec::new();
        for j in 0..nz {
            for i in 0..nr {
                if skip[j * nr + i] {
                    continue;
                }
                let corners = [
                    (i, j, at(i, j)),
                    (i + 1, j, at(i + 1, j)),
                    (i + 1, j + 1, at(i + 1, j + 1)),
                    (i, j + 1, at(i, j + 1)),
                ];
                let mut pts = Vec::new();
                for e in 0..4 {
                    let (ia, ja, va) = corners[e];
                    let (ib, jb, vb) = corners[(e + 1) % 4];
                    if (va - level) * (vb - level) < 0.0 {
                        let t = (level - va) / (vb - va);
                        let r = self.r0 + (ia as f64 + t * (ib as f64 - ia as f64)) * self.dr;
                        let z = self.z0 + (ja as f64 + t * (jb as f64 - ja as f64)) * self.dz;
                        pts.push((r * 1e3, z * 1e3));
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

/// |E| map with equipotential lines; conductors grey, insulators outlined black, vacuum
/// regions outlined blue.
pub fn field_map(model: &Model, fine: &Analysis) -> PlotResult {
    let mesh = &fine.mesh;
    let fm = fine.field_map(model);
    let dom = model.tank.bbox();
    let (w, h) = (dom.r_max - dom.r_min, dom.z_max - dom.z_min);
    // A raster of about 120 cells across the larger side.
    let n_long = 160usize;
    let (nr, nz) = if h >= w {
        (((n_long as f64) * w / h).ceil().max(8.0) as usize, n_long)
    } else {
        (n_long, ((n_long as f64) * h / w).ceil().max(8.0) as usize)
    };
    let (dr, dz) = (w / nr as f64, h / nz as f64);
    let mut e = vec![0.0; nr * nz];
    let mut phi = vec![0.0; (nr + 1) * (nz + 1)];
    let mut solid = vec![false; nr * nz];
    for j in 0..nz {
        for i in 0..nr {
            let p = crate::geometry::Point::new(
                dom.r_min + (i as f64 + 0.5) * dr,
                dom.z_min + (j as f64 + 0.5) * dz,
            );
            let f = fm.at(p);
            e[j * nr + i] = f.field[0].hypot(f.field[1]);
            let k = mesh.idx(mesh.r.locate(p.r), mesh.z.locate(p.z));
            solid[j * nr + i] =
                !mesh.fixed[k].is_free() || model.conductors.iter().any(|c| c.shape.contains(p));
        }
    }
    let grid = Raster {
        nr,
        nz,
        r0: dom.r_min,
        z0: dom.z_min,
        dr,
        dz,
        r_max: dom.r_max,
        z_max: dom.z_max,
    };
    for j in 0..=nz {
        for i in 0..=nr {
            phi[j * (nr + 1) + i] = fm.at(grid.corner(i, j)).potential_v;
        }
    }
    let emax = e.iter().cloned().fold(0.0, f64::max).max(f64::MIN_POSITIVE);
    let width = 520u32;
    let height = ((width as f64 - 120.0) * h / w + 110.0).clamp(300.0, 1400.0) as u32;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (width, height)).into_drawing_area();
        root.fill(&WHITE).map_err(err)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(
                "|E| (colour), equipotentials (white), insulators (black), vacuum (blue)",
                ("sans-serif", 14),
            )
            .margin(10)
            .x_label_area_size(40)
            .y_label_area_size(55)
            .build_cartesian_2d(
                dom.r_min * 1e3..dom.r_max * 1e3,
                dom.z_min * 1e3..dom.z_max * 1e3,
            )
            .map_err(err)?;
        chart
            .configure_mesh()
            .x_desc("r (mm)")
            .y_desc("z (mm)")
            .disable_mesh()
            .draw()
            .map_err(err)?;
        chart
            .draw_series(
                (0..nz)
                    .flat_map(|j| (0..nr).map(move |i| (i, j)))
                    .map(|(i, j)| {
                        let k = j * nr + i;
                        let c = if solid[k] {
                            RGBColor(150, 150, 150)
                        } else {
                            heat(e[k] / emax)
                        };
                        let r0 = (dom.r_min + i as f64 * dr) * 1e3;
                        let z0 = (dom.z_min + j as f64 * dz) * 1e3;
                        Rectangle::new([(r0, z0), (r0 + dr * 1e3, z0 + dz * 1e3)], c.filled())
                    }),
            )
            .map_err(err)?;
        // Equipotentials by marching squares on the corner potentials.
        let (vmin, vmax) = phi
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
                (a.min(v), b.max(v))
            });
        let levels = 10;
        let mut segments = Vec::new();
        for l in 1..levels {
            let v = vmin + (vmax - vmin) * l as f64 / levels as f64;
            segments.extend(grid.contour(&phi, v, &solid));
        }
        chart
            .draw_series(
                segments
                    .into_iter()
                    .map(|(a, b)| PathElement::new(vec![a, b], WHITE.stroke_width(1))),
            )
            .map_err(err)?;
        // Outlines of the insulators (black) and the vacuum regions (blue): the zero level of
        // each one's signed distance at the corners.
        let open = vec![false; nr * nz];
        let outline = |shape: &crate::geometry::Shape| {
            let d: Vec<f64> = (0..=nz)
                .flat_map(|j| (0..=nr).map(move |i| (i, j)))
                .map(|(i, j)| shape.sdf(grid.corner(i, j)))
                .collect();
            grid.contour(&d, 0.0, &open)
        };
        for (shapes, colour) in [
            (
                model
                    .dielectrics
                    .iter()
                    .map(|d| &d.shape)
                    .collect::<Vec<_>>(),
                BLACK,
            ),
            (
                model.vacuum.iter().map(|v| &v.shape).collect::<Vec<_>>(),
                RGBColor(30, 60, 200),
            ),
        ] {
            for shape in shapes {
                chart
                    .draw_series(
                        outline(shape)
                            .into_iter()
                            .map(|(a, b)| PathElement::new(vec![a, b], colour.stroke_width(2))),
                    )
                    .map_err(err)?;
            }
        }
        root.present().map_err(err)?;
    }
    Ok(svg)
}

/// The chart of an x–y figure with a legend: white page, caption, axis labels; `draw` adds
/// the labelled series.
type XyChart<'a, 'b> =
    ChartContext<'a, SVGBackend<'b>, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

struct Frame<'t> {
    size: (u32, u32),
    caption: &'t str,
    x: std::ops::Range<f64>,
    y: std::ops::Range<f64>,
    x_desc: &'t str,
    y_desc: &'t str,
}

fn xy_figure(
    frame: Frame<'_>,
    draw: impl FnOnce(&mut XyChart<'_, '_>) -> Result<(), PlotError>,
) -> PlotResult {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, frame.size).into_drawing_area();
        root.fill(&WHITE).map_err(err)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(frame.caption, ("sans-serif", 16))
            .margin(10)
            .x_label_area_size(40)
            .y_label_area_size(55)
            .build_cartesian_2d(frame.x, frame.y)
            .map_err(err)?;
        chart
            .configure_mesh()
            .x_desc(frame.x_desc)
            .y_desc(frame.y_desc)
            .draw()
            .map_err(err)?;
        draw(&mut chart)?;
        chart
            .configure_series_labels()
            .background_style(WHITE)
            .border_style(BLACK)
            .draw()
            .map_err(err)?;
        root.present().map_err(err)?;
    }
    Ok(svg)
}

/// Peak surface field of every conductor against the z of its peak.
pub fn column_field(report: &Report) -> PlotResult {
    let pts: Vec<(f64, f64)> = report
        .conductors
        .iter()
        .filter(|c| c.at_m[1].is_finite())
        .map(|c| (c.at_m[1] * 1e3, c.peak_surface_field_v_per_m / 1e6))
        .collect();
    let zmax = pts.iter().map(|p| p.0).fold(0.0, f64::max).max(1.0);
    let emax = pts.iter().map(|p| p.1).fold(0.0, f64::max).max(1e-3);
    xy_figure(
        Frame {
            size: (640, 360),
            caption: "Peak surface field of each conductor",
            x: 0.0..zmax * 1.05,
            y: 0.0..emax * 1.1,
            x_desc: "z of the peak (mm)",
            y_desc: "peak |E| (kV/mm)",
        },
        |chart| {
            chart
                .draw_series(pts.iter().map(|&p| Circle::new(p, 3, BLUE.filled())))
                .map_err(err)?
                .label("conductor peak")
                .legend(|(x, y)| Circle::new((x, y), 3, BLUE.filled()));
            Ok(())
        },
    )
}

/// Bars of the worst margins with the design factor marked.
pub fn margin_bars(report: &Report, rows: usize) -> PlotResult {
    let bars: Vec<(String, f64, f64)> = report
        .margins
        .iter()
        .filter_map(|r| {
            r.margin.map(|m| {
                (
                    format!("{} - {}", r.item, r.criterion_name),
                    m,
                    r.margin_ideal.unwrap_or(m),
                )
            })
        })
        .take(rows)
        .collect();
    let n = bars.len().max(1);
    let mmax = bars
        .iter()
        .map(|b| b.1)
        .fold(report.design_factor, f64::max)
        * 1.15;
    let height = (60 + 22 * n as u32).max(200);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (760, height)).into_drawing_area();
        root.fill(&WHITE).map_err(err)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(
                "Worst margins (limit / peak); red line: design factor",
                ("sans-serif", 16),
            )
            .margin(10)
            .x_label_area_size(35)
            .y_label_area_size(10)
            .build_cartesian_2d(0.0..mmax, 0.0..n as f64)
            .map_err(err)?;
        chart
            .configure_mesh()
            .x_desc("margin")
            .disable_y_axis()
            .disable_y_mesh()
            .draw()
            .map_err(err)?;
        chart
            .draw_series(bars.iter().enumerate().map(|(k, b)| {
                let y = (n - 1 - k) as f64;
                let colour = if b.1 < report.design_factor {
                    RGBColor(200, 40, 40)
                } else if b.1 < 1.1 * report.design_factor {
                    RGBColor(230, 160, 30)
                } else {
                    RGBColor(60, 120, 190)
                };
                Rectangle::new([(0.0, y + 0.15), (b.1, y + 0.85)], colour.filled())
            }))
            .map_err(err)?;
        chart
            .draw_series(bars.iter().enumerate().map(|(k, b)| {
                let y = (n - 1 - k) as f64 + 0.5;
                Text::new(
                    b.0.clone(),
                    (mmax * 0.01, y),
                    ("sans-serif", 11).into_font().color(&WHITE),
                )
            }))
            .map_err(err)?;
        chart
            .draw_series(std::iter::once(PathElement::new(
                vec![
                    (report.design_factor, 0.0),
                    (report.design_factor, n as f64),
                ],
                RED.stroke_width(2),
            )))
            .map_err(err)?;
        root.present().map_err(err)?;
    }
    Ok(svg)
}

/// Worst margin (and worst gas margin) against the swept value, with the design factor.
pub fn sweep_plot(
    parameter: &str,
    unit_scale: f64,
    unit: &str,
    points: &[crate::sweep::SweepPoint],
    design_factor: f64,
) -> PlotResult {
    let xs: Vec<f64> = points.iter().map(|p| p.value_si / unit_scale).collect();
    let (x0, x1) = xs
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
            (a.min(x), b.max(x))
        });
    let ymax = points
        .iter()
        .filter_map(|p| p.worst_margin)
        .fold(design_factor, f64::max)
        * 1.15;
    let worst: Vec<(f64, f64)> = xs
        .iter()
        .zip(points)
        .filter_map(|(&x, p)| p.worst_margin.map(|m| (x, m)))
        .collect();
    let gas: Vec<(f64, f64)> = xs
        .iter()
        .zip(points)
        .filter_map(|(&x, p)| p.worst_gas_margin.map(|m| (x, m)))
        .collect();
    let caption = format!("Worst margin against {parameter}");
    let x_desc = format!("{parameter} ({unit})");
    xy_figure(
        Frame {
            size: (640, 380),
            caption: &caption,
            x: x0..x1,
            y: 0.0..ymax,
            x_desc: &x_desc,
            y_desc: "margin",
        },
        |chart| {
            chart
                .draw_series(LineSeries::new(worst.clone(), BLUE.stroke_width(2)))
                .map_err(err)?
                .label("worst margin")
                .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], BLUE.stroke_width(2)));
            chart
                .draw_series(worst.iter().map(|&p| Circle::new(p, 3, BLUE.filled())))
                .map_err(err)?;
            chart
                .draw_series(LineSeries::new(gas, GREEN.stroke_width(1)))
                .map_err(err)?
                .label("worst gas margin")
                .legend(|(x, y)| {
                    PathElement::new(vec![(x, y), (x + 20, y)], GREEN.stroke_width(1))
                });
            chart
                .draw_series(std::iter::once(PathElement::new(
                    vec![(x0, design_factor), (x1, design_factor)],
                    RED.stroke_width(2),
                )))
                .map_err(err)?
                .label("design factor")
                .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], RED.stroke_width(2)));
            Ok(())
        },
    )
}

/// |E| along the surface of the most stressed conductors: each sample placed by its angle
/// around the centre of the conductor's bounding box (0° = outward along +r, 90° = +z).
pub fn surface_profiles(model: &Model, fine: &Analysis, conductors: usize) -> PlotResult {
    let mut order: Vec<usize> = (0..fine.peaks.len()).collect();
    order.sort_by(|&a, &b| {
        fine.peaks[b]
            .peak_surface_field_v_per_m
            .total_cmp(&fine.peaks[a].peak_surface_field_v_per_m)
    });
    order.truncate(conductors);
    let palette = [BLUE, RED, GREEN, MAGENTA, CYAN];
    let mut curves = Vec::new();
    let mut emax: f64 = 1e-3;
    for (n, &k) in order.iter().enumerate() {
        let b = model.conductors[k].shape.bbox();
        let (cr, cz) = (0.5 * (b.r_min + b.r_max), 0.5 * (b.z_min + b.z_max));
        let mut pts: Vec<(f64, f64)> = fine
            .samples
            .iter()
            .filter(|s| s.conductor.conductor_index() == Some(k))
            .map(|s| {
                let ang = (s.at.z - cz).atan2(s.at.r - cr).to_degrees();
                (ang, s.e / 1e6)
            })
            .collect();
        pts.sort_by(|a, b| a.0.total_cmp(&b.0));
        emax = pts.iter().map(|p| p.1).fold(emax, f64::max);
        curves.push((
            model.conductors[k].name.clone(),
            palette[n % palette.len()],
            pts,
        ));
    }
    xy_figure(
        Frame {
            size: (640, 380),
            caption: "Surface field along the most stressed conductors",
            x: -180.0..180.0,
            y: 0.0..emax * 1.1,
            x_desc: "angle around the conductor's centre (degrees; 0 = +r, 90 = +z)",
            y_desc: "|E| on the surface (kV/mm)",
        },
        |chart| {
            for (name, colour, pts) in curves {
                chart
                    .draw_series(pts.iter().map(|&p| Circle::new(p, 2, colour.filled())))
                    .map_err(err)?
                    .label(name)
                    .legend(move |(x, y)| Circle::new((x, y), 3, colour.filled()));
            }
            Ok(())
        },
    )
}
