//! The workbench's two charts: densities over time and the phase plane,
//! each with census counts drawn over the model when given.

use plotters::coord::Shift;
use plotters::prelude::*;
use tussock_core::analysis::Stability;
use tussock_core::data::CountData;
use tussock_core::run::Run;

use crate::{
    axes, draw_marks, err, font_size, legend_entry, plot_map, px, upper_bound, AxisDesc,
    DrawResult, LegendSample, Marker, EXTRA, FIELD, INK, OKABE_ITO, SPECIES_COLOURS,
    SPECIES_MARKERS,
};

/// Smallest density drawn on a log axis, relative to the largest.
const LOG_FLOOR: f64 = 1e-6;

/// The observed counts of the model's species as (species, time, count),
/// missing counts and unknown species left out.
fn counted(observed: Option<&CountData>, n_species: usize) -> Vec<(usize, f64, f64)> {
    let Some(data) = observed else {
        return Vec::new();
    };
    data.series
        .iter()
        .filter(|s| s.species < n_species)
        .flat_map(|s| {
            data.times
                .iter()
                .zip(&s.counts)
                .filter_map(move |(&t, c)| c.map(|c| (s.species, t, c)))
        })
        .filter(|(_, t, c)| t.is_finite() && c.is_finite())
        .collect()
}

/// Densities of every species against time, on a linear or log10 axis;
/// `observed` counts, if given, as markers over the lines (each species in
/// its colour, with its marker: circles for the first, triangles for the
/// second).
pub fn draw_time_series<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    run: &Run,
    observed: Option<&CountData>,
    scale: f64,
    log_y: bool,
) -> DrawResult {
    root.fill(&WHITE).map_err(err)?;
    let traj = &run.trajectory;
    let problem = &run.problem;
    let counts = counted(observed, traj.n_species);
    let y_max = upper_bound(
        (0..traj.n_species)
            .flat_map(|i| traj.series(i))
            .chain(counts.iter().map(|c| c.2)),
    );
    let t_end = counts.iter().map(|c| c.1).fold(problem.t_end, f64::max);
    let floor = if log_y {
        let smallest = (0..traj.n_species)
            .flat_map(|i| traj.series(i))
            .chain(counts.iter().map(|c| c.2))
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
    let time_label = format!("time ({})", problem.time_unit);
    let y_axis = AxisDesc::new(y_range, y_desc, log_y);
    let mut chart = axes(
        root,
        scale,
        AxisDesc::linear(0.0..t_end, &time_label),
        y_axis,
    )?;
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
                ("sans-serif", font_size(scale, 11.0))
                    .into_font()
                    .color(&colour),
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
    // Counts over the lines.
    let map = plot_map(&chart, false, log_y);
    for i in 0..traj.n_species {
        let points: Vec<(f64, f64)> = counts
            .iter()
            .filter(|c| c.0 == i)
            .map(|c| (c.1, transform(c.2)))
            .collect();
        if points.is_empty() {
            continue;
        }
        let look = (SPECIES_MARKERS[i % 2], SPECIES_COLOURS[i % 2], true);
        draw_marks(&mut chart, &map, points, look, scale)?;
        legend_entry(
            &mut chart,
            format!("{} counted", problem.species[i]),
            LegendSample::marker(look.1, look.0, true, scale),
        )?;
    }
    // Pulses: triangles on the time axis, up for additions, down for removals.
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
    crate::legend(&mut chart, scale, SeriesLabelPosition::UpperRight)?;
    root.present().map_err(err)?;
    Ok(map)
}

/// The phase plane: direction field, both nullclines (prey dashed, predator
/// dotted), equilibria marked by stability (filled = stable, open =
/// unstable, a cross for saddles), the trajectory and any extra ones; and
/// `observed` counts, if given: the times where both species were counted,
/// as squares joined thinly in time order (those inside the window).
pub fn draw_phase_plane<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    run: &Run,
    observed: Option<&CountData>,
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
    let x_label = format!("{} (individuals)", problem.species[0]);
    let y_label = format!("{} (individuals)", problem.species[1]);
    let mut chart = axes(
        root,
        scale,
        AxisDesc::linear(0.0..x_max, &x_label),
        AxisDesc::linear(0.0..y_max, &y_label),
    )?;
    let map = plot_map(&chart, false, false);

    // Direction field: short arrows of equal length, in pixels.
    let (nx, ny) = (18, 13);
    let arrow = 9.0 * crate::usable_scale(scale);
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

    // Counts of both species at the same times, in time order.
    let pairs = paired_counts(observed);
    if !pairs.is_empty() {
        let colour = OKABE_ITO.reddish_purple;
        let thin = colour.mix(0.8).stroke_width(px(scale, 1.0));
        for w in pairs.windows(2) {
            if map.holds(w[0]) && map.holds(w[1]) {
                chart
                    .draw_series(LineSeries::new([w[0], w[1]], thin))
                    .map_err(err)?;
            }
        }
        draw_marks(
            &mut chart,
            &map,
            pairs,
            (Marker::Square, colour, true),
            scale,
        )?;
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

/// (species 1, species 2) counts at the times both were counted, in time
/// order.
fn paired_counts(observed: Option<&CountData>) -> Vec<(f64, f64)> {
    let Some(data) = observed else {
        return Vec::new();
    };
    let of = |i: usize| data.series.iter().find(|s| s.species == i);
    let (Some(first), Some(second)) = (of(0), of(1)) else {
        return Vec::new();
    };
    let mut pairs: Vec<(f64, (f64, f64))> = data
        .times
        .iter()
        .zip(first.counts.iter().zip(&second.counts))
        .filter_map(|(&t, (a, b))| Some((t, ((*a)?, (*b)?))))
        .filter(|(t, (a, b))| t.is_finite() && a.is_finite() && b.is_finite())
        .collect();
    pairs.sort_by(|a, b| a.0.total_cmp(&b.0));
    pairs.into_iter().map(|(_, p)| p).collect()
}

#[cfg(test)]
mod tests {
    //! The workbench charts with census counts over the model: the U.S.
    //! census 1790–2000 (see `fit.rs`) over a logistic run, and counts of
    //! the greenhouse mites on the phase plane. Each count must be drawn
    //! where it was counted.

    use super::*;
    use crate::fit::tests::{census, census_scenario, US_CENSUS};
    use crate::testing::{draw, hex, problem, Drawn, GREENHOUSE_MITES};
    use tussock_core::data::CountSeries;

    fn census_run() -> Run {
        Run::compute(census_scenario().validate().unwrap(), &[])
    }

    /// The one place the tests draw the time series.
    fn check(run: &Run, observed: Option<&CountData>, log_y: bool, name: &str) -> Drawn {
        let drawn = draw(|root| draw_time_series(root, run, observed, 1.0, log_y));
        drawn.keep(name);
        drawn
    }

    /// Small filled circles (markers, not legend samples) in a colour, in
    /// data coordinates.
    fn marks(drawn: &Drawn, colour: RGBColor) -> Vec<(f64, f64)> {
        drawn
            .circles(&hex(colour))
            .into_iter()
            .filter(|c| c.2 < 4.5)
            .map(|c| drawn.data_at((c.0, c.1)))
            .collect()
    }

    #[test]
    fn counts_are_drawn_where_they_were_counted() {
        let run = census_run();
        let data = census();
        for log_y in [false, true] {
            let drawn = check(&run, Some(&data), log_y, &format!("counts-{log_y}"));
            assert!(drawn.has_text("people (millions) counted"));
            let found = marks(&drawn, SPECIES_COLOURS[0]);
            assert_eq!(found.len(), US_CENSUS.len());
            let span = drawn.map.y.1 - drawn.map.y.0;
            for (year, count) in US_CENSUS {
                let hit = found.iter().any(|&(t, y)| {
                    let off = if log_y {
                        (y / count).log10()
                    } else {
                        y - count
                    };
                    (t - (year - 1790.0)).abs() < 0.5 && off.abs() < 2.0 * span / 460.0
                });
                assert!(hit, "{year}: {count} not among {found:?}");
            }
        }
        // Without counts, no markers and the model line as before: one
        // solid line through every output time.
        let drawn = check(&run, None, false, "counts-none");
        assert!(marks(&drawn, SPECIES_COLOURS[0]).is_empty());
        let n = run.trajectory.times.len();
        assert!(drawn
            .polylines(&hex(SPECIES_COLOURS[0]), 2)
            .iter()
            .any(|l| l.len() == n));
    }

    #[test]
    fn counts_outside_the_run_and_odd_values_do_not_break_it() {
        let run = census_run();
        let mut data = census();
        data.times.push(400.0);
        data.series[0].counts.push(Some(500.0));
        data.series[0].counts[3] = None;
        data.series[0].counts[5] = Some(f64::NAN);
        data.series[0].counts[4] = Some(0.0);
        data.series.push(CountSeries {
            species: 3,
            column: "nobody".to_string(),
            counts: vec![Some(1.0); 2],
        });
        let drawn = check(&run, Some(&data), true, "counts-odd");
        // One missing count and one not a number left out; the other 21
        // drawn (the zero on the log axis's floor), the time axis reaching
        // the count at 400.
        assert_eq!(marks(&drawn, SPECIES_COLOURS[0]).len(), 21);
        assert!(drawn.map.x.1 >= 400.0);
    }

    #[test]
    fn phase_plane_joins_paired_counts_in_time_order() {
        let run = Run::compute(problem(GREENHOUSE_MITES), &[]);
        // Counts of both mites every 10 days, one predator count missing.
        let times: Vec<f64> = (0..=8).map(|k| 10.0 * k as f64).collect();
        let at = |t: f64, i: usize| {
            let k = run.trajectory.times.iter().position(|&s| s >= t).unwrap();
            Some(run.trajectory.states[k][i].round())
        };
        let mut predators: Vec<Option<f64>> = times.iter().map(|&t| at(t, 1)).collect();
        predators[4] = None;
        let data = CountData {
            series: vec![
                CountSeries {
                    species: 1,
                    column: "predators".to_string(),
                    counts: predators.clone(),
                },
                CountSeries {
                    species: 0,
                    column: "prey".to_string(),
                    counts: times.iter().map(|&t| at(t, 0)).collect(),
                },
            ],
            times: times.clone(),
        };
        let drawn = draw(|root| draw_phase_plane(root, &run, Some(&data), 1.0));
        drawn.keep("phase-counts");
        let squares: Vec<(f64, f64)> = drawn
            .rects(&hex(OKABE_ITO.reddish_purple))
            .iter()
            .map(|r| drawn.data_at((r[0] + r[2] / 2.0, r[1] + r[3] / 2.0)))
            .collect();
        let expected: Vec<(f64, f64)> = times
            .iter()
            .zip(&predators)
            .filter_map(|(&t, p)| Some((at(t, 0)?, (*p)?)))
            .collect();
        assert_eq!(squares.len(), expected.len());
        let (w, h) = (drawn.map.x.1 / 860.0, drawn.map.y.1 / 480.0);
        for (e, s) in expected.iter().zip(&squares) {
            assert!(
                (e.0 - s.0).abs() < 2.0 * w && (e.1 - s.1).abs() < 2.0 * h,
                "{e:?} {s:?}"
            );
        }
        let joins = format!(
            "opacity=\"0.8\" stroke=\"{}\"",
            hex(OKABE_ITO.reddish_purple)
        );
        assert_eq!(drawn.svg.matches(&joins).count(), expected.len() - 1);
        // One species: no phase plane, said plainly.
        let one = census_run();
        let svg = crate::to_svg(300, 200, |root| draw_phase_plane(root, &one, None, 1.0));
        assert_eq!(svg, Err("one species: no phase plane".to_string()));
    }
}
