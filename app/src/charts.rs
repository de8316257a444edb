//! Charts, drawn by functions generic over plotters' `DrawingBackend` so the
//! canvas in the browser and SVG export share one drawing code.
//!
//! `scale` is the device pixel ratio: the backend is sized in device pixels,
//! and fonts, margins and line widths are multiplied by `scale` so charts are
//! crisp and equally proportioned at any ratio. Each function returns the
//! [`PlotMap`] from data to pixels, so the page can turn a click or a hover
//! back into data coordinates.

use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;
use tussock_core::analysis::Stability;

use crate::state::Run;

/// Line colours: Okabe & Ito (2008) colour-blind-safe palette (blue,
/// vermillion). Species also differ by line style (solid, dashed).
pub const SPECIES_COLOURS: [RGBColor; 2] = [RGBColor(0, 114, 178), RGBColor(213, 94, 0)];
const INK: RGBColor = RGBColor(40, 40, 40);
const FIELD: RGBColor = RGBColor(170, 170, 170);
/// Extra trajectories started by clicks: Okabe & Ito bluish green.
const EXTRA: RGBColor = RGBColor(0, 158, 115);

/// Where the data sit on the backend, in backend pixels.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PlotMap {
    pub pixels_x: (i32, i32),
    pub pixels_y: (i32, i32),
    pub x: (f64, f64),
    pub y: (f64, f64),
    /// Whether y is drawn as log10 of the density.
    pub log_y: bool,
}

impl PlotMap {
    /// Data coordinates of a backend pixel, if it lies in the plotting area.
    pub fn to_data(&self, px: f64, py: f64) -> Option<(f64, f64)> {
        let (x0, x1) = (f64::from(self.pixels_x.0), f64::from(self.pixels_x.1));
        let (y0, y1) = (f64::from(self.pixels_y.0), f64::from(self.pixels_y.1));
        if px < x0 || px > x1 || py < y0 || py > y1 || x1 <= x0 || y1 <= y0 {
            return None;
        }
        let x = self.x.0 + (px - x0) / (x1 - x0) * (self.x.1 - self.x.0);
        // Pixel rows grow downwards.
        let y = self.y.1 - (py - y0) / (y1 - y0) * (self.y.1 - self.y.0);
        Some((x, if self.log_y { 10f64.powf(y) } else { y }))
    }
}

type DrawResult = Result<PlotMap, String>;
type Chart<'a, DB> = ChartContext<'a, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

fn err<E: std::fmt::Debug>(e: E) -> String {
    format!("{e:?}")
}

fn px(scale: f64, css_px: f64) -> u32 {
    (css_px * scale).round().max(1.0) as u32
}

fn upper_bound(values: impl Iterator<Item = f64>) -> f64 {
    let max = values.filter(|v| v.is_finite()).fold(0.0_f64, f64::max);
    if max > 0.0 {
        max * 1.05
    } else {
        1.0
    }
}

/// A chart area with both axes drawn and labelled.
fn axes<'a, DB: DrawingBackend>(
    root: &'a DrawingArea<DB, Shift>,
    scale: f64,
    (x_range, x_desc): (std::ops::Range<f64>, &str),
    (y_range, y_desc): (std::ops::Range<f64>, &str),
    log_y: bool,
) -> Result<Chart<'a, DB>, String> {
    let font = ("sans-serif", 13.0 * scale);
    let mut chart = ChartBuilder::on(root)
        .margin(px(scale, 10.0))
        .margin_right(px(scale, 24.0))
        .x_label_area_size(px(scale, 36.0))
        .y_label_area_size(px(scale, 60.0))
        .build_cartesian_2d(x_range, y_range)
        .map_err(err)?;
    let y_format = move |v: &f64| {
        if log_y {
            tick(10f64.powf(*v))
        } else {
            tick(*v)
        }
    };
    chart
        .configure_mesh()
        .x_desc(x_desc)
        .y_desc(y_desc)
        .label_style(font)
        .axis_desc_style(font)
        .x_label_formatter(&|v| tick(*v))
        .y_label_formatter(&y_format)
        .light_line_style(RGBColor(235, 235, 235))
        .draw()
        .map_err(err)?;
    Ok(chart)
}

fn plot_map<DB: DrawingBackend>(chart: &Chart<'_, DB>, log_y: bool) -> PlotMap {
    let area = chart.plotting_area();
    let (px_x, px_y) = area.get_pixel_range();
    let x = area.get_x_range();
    let y = area.get_y_range();
    PlotMap {
        pixels_x: (px_x.start, px_x.end),
        pixels_y: (px_y.start, px_y.end),
        x: (x.start, x.end),
        y: (y.start, y.end),
        log_y,
    }
}

/// A tick label without trailing zeros: `20`, `2.5`, `1e6`.
pub fn tick(v: f64) -> String {
    if v != 0.0 && (v.abs() >= 1e6 || v.abs() < 1e-3) {
        return format!("{v:.1e}");
    }
    let s = format!("{v:.3}");
    s.trim_end_matches('0').trim_end_matches('.').to_string()
}

/// Smallest density drawn on a log axis, relative to the largest.
const LOG_FLOOR: f64 = 1e-6;

/// Densities of every species against time, on a linear or log10 axis.
pub fn draw_time_series<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    run: &Run,
    scale: f64,
    log_y: bool,
) -> DrawResult {
    root.fill(&WHITE).map_err(err)?;
    let traj = &run.trajectory;
    let problem = &run.problem;
    let y_max = upper_bound((0..traj.n_species).flat_map(|i| traj.series(i)));
    let floor = if log_y {
        let smallest = (0..traj.n_species)
            .flat_map(|i| traj.series(i))
            .filter(|v| *v > 0.0)
            .fold(f64::INFINITY, f64::min);
        smallest.max(y_max * LOG_FLOOR).min(y_max / 10.0)
    } else {
        0.0
    };
    let transform = |v: f64| if log_y { v.max(floor).log10() } else { v };
    let y_range = if log_y {
        floor.log10()..y_max.log10()
    } else {
        0.0..y_max
    };
    let y_desc = if log_y {
        "density (individuals, log scale)"
    } else {
        "density (individuals)"
    };
    let mut chart = axes(
        root,
        scale,
        (0.0..problem.t_end, &format!("time ({})", problem.time_unit)),
        (y_range, y_desc),
        log_y,
    )?;
    let font = ("sans-serif", 13.0 * scale);
    for i in 0..traj.n_species {
        let colour = SPECIES_COLOURS[i % SPECIES_COLOURS.len()];
        let style = colour.stroke_width(px(scale, 2.0));
        let points: Vec<(f64, f64)> = traj
            .times
            .iter()
            .copied()
            .zip(traj.series(i).map(transform))
            .collect();
        let name = problem.species[i].clone();
        let seg = px(scale, 7.0) as i32;
        if i == 0 {
            chart
                .draw_series(LineSeries::new(points, style))
                .map_err(err)?
                .label(name)
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 3 * seg, y)], style));
        } else {
            let dash = px(scale, 6.0);
            chart
                .draw_series(DashedLineSeries::new(points, dash, dash, style))
                .map_err(err)?
                .label(name)
                .legend(move |(x, y)| {
                    EmptyElement::at((x, y))
                        + PathElement::new(vec![(0, 0), (seg, 0)], style)
                        + PathElement::new(vec![(2 * seg, 0), (3 * seg, 0)], style)
                });
        }
    }
    // Thresholds: economic threshold dashed, injury level dotted, each
    // labelled; quasi-extinction levels thin and dashed in the species colour.
    let th = &problem.thresholds;
    let lines = [
        (th.economic_threshold, "economic threshold", INK, 8.0),
        (th.economic_injury_level, "economic injury level", INK, 2.0),
    ];
    for (level, label, colour, dash) in lines {
        let Some(level) = level else { continue };
        let y = transform(level);
        let style = colour.stroke_width(px(scale, 1.5));
        chart
            .draw_series(DashedLineSeries::new(
                [(0.0, y), (problem.t_end, y)],
                px(scale, dash),
                px(scale, 4.0),
                style,
            ))
            .map_err(err)?;
        chart
            .draw_series(std::iter::once(Text::new(
                label.to_string(),
                (problem.t_end * 0.01, y),
                ("sans-serif", 11.0 * scale).into_font().color(&colour),
            )))
            .map_err(err)?;
    }
    for (i, q) in th.quasi_extinction.iter().enumerate().take(traj.n_species) {
        if let Some(q) = q {
            let y = transform(*q);
            let style = SPECIES_COLOURS[i % 2].mix(0.7).stroke_width(px(scale, 1.0));
            chart
                .draw_series(DashedLineSeries::new(
                    [(0.0, y), (problem.t_end, y)],
                    px(scale, 3.0),
                    px(scale, 3.0),
                    style,
                ))
                .map_err(err)?;
        }
    }
    // Pulses: triangles on the time axis, up for additions, down for removals.
    let map = plot_map(&chart, log_y);
    let base_y = map.pixels_y.1 - px(scale, 6.0) as i32;
    for pulse in &traj.pulses {
        let x = pulse.time;
        let w = f64::from(map.pixels_x.1 - map.pixels_x.0);
        let px_x = map.pixels_x.0 + ((x - map.x.0) / (map.x.1 - map.x.0) * w) as i32;
        let size = px(scale, 5.0) as i32;
        let colour = SPECIES_COLOURS[pulse.species % 2];
        let tri = if pulse.after >= pulse.before {
            vec![
                (px_x - size, base_y + size),
                (px_x + size, base_y + size),
                (px_x, base_y - size),
            ]
        } else {
            vec![
                (px_x - size, base_y - size),
                (px_x + size, base_y - size),
                (px_x, base_y + size),
            ]
        };
        root.draw(&Polygon::new(tri, colour.filled()))
            .map_err(err)?;
    }
    chart
        .configure_series_labels()
        .label_font(font)
        .background_style(WHITE.mix(0.85))
        .border_style(RGBColor(180, 180, 180))
        .position(SeriesLabelPosition::UpperRight)
        .draw()
        .map_err(err)?;
    root.present().map_err(err)?;
    Ok(map)
}

/// The phase plane: direction field, both nullclines (prey dashed, predator
/// dotted), equilibria marked by stability (filled = stable, open =
/// unstable, a cross for saddles), the trajectory and any extra ones.
pub fn draw_phase_plane<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    run: &Run,
    scale: f64,
) -> DrawResult {
    root.fill(&WHITE).map_err(err)?;
    let traj = &run.trajectory;
    let problem = &run.problem;
    if traj.n_species < 2 {
        root.present().map_err(err)?;
        return Err("one species: no phase plane".to_string());
    }
    let (x_max, y_max) = run.window;
    let mut chart = axes(
        root,
        scale,
        (0.0..x_max, &format!("{} (individuals)", problem.species[0])),
        (0.0..y_max, &format!("{} (individuals)", problem.species[1])),
        false,
    )?;
    let map = plot_map(&chart, false);

    // Direction field: short arrows of equal length, in pixels.
    let (nx, ny) = (18, 13);
    let arrow = 9.0 * scale;
    let w = f64::from(map.pixels_x.1 - map.pixels_x.0).max(1.0);
    let h = f64::from(map.pixels_y.1 - map.pixels_y.0).max(1.0);
    let field_style = FIELD.stroke_width(px(scale, 1.0));
    for i in 0..nx {
        for j in 0..ny {
            let x = (i as f64 + 0.5) / nx as f64 * x_max;
            let y = (j as f64 + 0.5) / ny as f64 * y_max;
            let d = problem
                .model
                .derivative(&problem.params, &tussock_core::State::new(x, y));
            // Direction in pixel space.
            let (dx, dy) = (d[0] / x_max * w, -d[1] / y_max * h);
            let len = (dx * dx + dy * dy).sqrt();
            if !(len.is_finite() && len > 0.0) {
                continue;
            }
            let (ux, uy) = (dx / len * arrow, dy / len * arrow);
            let centre = (
                map.pixels_x.0 + ((x / x_max) * w) as i32,
                map.pixels_y.1 - ((y / y_max) * h) as i32,
            );
            let tail = (centre.0 - (ux / 2.0) as i32, centre.1 - (uy / 2.0) as i32);
            let tip = (centre.0 + (ux / 2.0) as i32, centre.1 + (uy / 2.0) as i32);
            let (bx, by) = (-ux * 0.35, -uy * 0.35);
            let barb1 = (
                tip.0 + (bx - by * 0.6) as i32,
                tip.1 + (by + bx * 0.6) as i32,
            );
            let barb2 = (
                tip.0 + (bx + by * 0.6) as i32,
                tip.1 + (by - bx * 0.6) as i32,
            );
            root.draw(&PathElement::new(vec![tail, tip], field_style))
                .map_err(err)?;
            root.draw(&PathElement::new(vec![barb1, tip, barb2], field_style))
                .map_err(err)?;
        }
    }

    // Nullclines.
    for nc in &run.nullclines {
        let colour = SPECIES_COLOURS[nc.species % 2];
        let style = colour.mix(0.9).stroke_width(px(scale, 2.0));
        for line in &nc.polylines {
            let points = line.iter().copied();
            if nc.species == 0 {
                chart
                    .draw_series(DashedLineSeries::new(
                        points,
                        px(scale, 8.0),
                        px(scale, 5.0),
                        style,
                    ))
                    .map_err(err)?;
            } else {
                chart
                    .draw_series(DashedLineSeries::new(
                        points,
                        px(scale, 2.0),
                        px(scale, 4.0),
                        style,
                    ))
                    .map_err(err)?;
            }
        }
    }

    // Trajectories: extra ones first, the scenario's on top.
    for extra in &run.extra {
        let points: Vec<(f64, f64)> = extra.states.iter().map(|s| (s[0], s[1])).collect();
        chart
            .draw_series(LineSeries::new(
                points.iter().copied(),
                EXTRA.stroke_width(px(scale, 1.5)),
            ))
            .map_err(err)?;
        if let Some(&start) = points.first() {
            chart
                .draw_series(std::iter::once(Circle::new(
                    start,
                    px(scale, 3.0),
                    EXTRA.filled(),
                )))
                .map_err(err)?;
        }
    }
    let points: Vec<(f64, f64)> = traj.states.iter().map(|s| (s[0], s[1])).collect();
    chart
        .draw_series(LineSeries::new(
            points.iter().copied(),
            INK.stroke_width(px(scale, 2.0)),
        ))
        .map_err(err)?;
    if let Some(&start) = points.first() {
        chart
            .draw_series(std::iter::once(Circle::new(
                start,
                px(scale, 4.0),
                INK.filled(),
            )))
            .map_err(err)?;
    }

    // Equilibria.
    let r = px(scale, 6.0);
    for eq in run
        .analysis
        .equilibria
        .iter()
        .filter(|e| e.feasible && e.state.len() == 2)
    {
        let at = (eq.state[0], eq.state[1]);
        if at.0 > x_max || at.1 > y_max {
            continue;
        }
        let stroke = INK.stroke_width(px(scale, 2.0));
        match eq.stability {
            s if s.is_stable() => {
                chart
                    .draw_series(std::iter::once(Circle::new(at, r, INK.filled())))
                    .map_err(err)?;
            }
            Stability::Saddle => {
                chart
                    .draw_series(std::iter::once(Circle::new(at, r, WHITE.filled())))
                    .map_err(err)?;
                chart
                    .draw_series(std::iter::once(Cross::new(at, r, stroke)))
                    .map_err(err)?;
            }
            _ => {
                chart
                    .draw_series(std::iter::once(Circle::new(at, r, WHITE.filled())))
                    .map_err(err)?;
                chart
                    .draw_series(std::iter::once(Circle::new(at, r, stroke)))
                    .map_err(err)?;
            }
        }
    }
    root.present().map_err(err)?;
    Ok(map)
}

#[cfg(test)]
mod tests {
    use super::{tick, PlotMap};

    #[test]
    fn tick_labels_are_short() {
        for (v, expected) in [
            (0.0, "0"),
            (20.0, "20"),
            (2.5, "2.5"),
            (0.125, "0.125"),
            (1e7, "1.0e7"),
            (0.0002, "2.0e-4"),
        ] {
            assert_eq!(tick(v), expected, "{v}");
        }
    }

    #[test]
    fn pixels_map_back_to_data() {
        let map = PlotMap {
            pixels_x: (100, 500),
            pixels_y: (10, 210),
            x: (0.0, 40.0),
            y: (0.0, 20.0),
            log_y: false,
        };
        assert_eq!(map.to_data(100.0, 210.0), Some((0.0, 0.0)));
        assert_eq!(map.to_data(300.0, 110.0), Some((20.0, 10.0)));
        assert_eq!(map.to_data(50.0, 110.0), None);
        let log = PlotMap {
            log_y: true,
            y: (0.0, 2.0),
            ..map
        };
        let (_, y) = log.to_data(100.0, 10.0).unwrap();
        assert!((y - 100.0).abs() < 1e-9);
    }
}
