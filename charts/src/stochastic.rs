//! Stochastic ensembles: the fan chart of one species, extinction
//! probabilities by time, and establishment against founders.

use plotters::coord::Shift;
use plotters::prelude::*;
use tussock_core::stochastic::{EnsembleSummary, EstablishmentTable};

use crate::{
    axes, draw_line, draw_marks, err, extent, legend, legend_entry, note, padded, plot_map, px,
    releases, series_look, short, upper_bound, AxisDesc, Chart, Dash, DrawResult, LegendSample,
    INK, SPECIES_COLOURS, SPECIES_MARKERS,
};

/// A shaded band between two curves over `xs`, broken where a value is not
/// finite.
fn band<'a, DB: DrawingBackend + 'a>(
    chart: &mut Chart<'a, DB>,
    xs: &[f64],
    lower: &[f64],
    upper: &[f64],
    fill: RGBAColor,
) -> Result<(), String> {
    let n = xs.len().min(lower.len()).min(upper.len());
    let ok = |i: usize| xs[i].is_finite() && lower[i].is_finite() && upper[i].is_finite();
    let mut i = 0;
    while i < n {
        if !ok(i) {
            i += 1;
            continue;
        }
        let start = i;
        while i < n && ok(i) {
            i += 1;
        }
        if i - start < 2 {
            continue;
        }
        let outline: Vec<(f64, f64)> = (start..i)
            .map(|k| (xs[k], upper[k]))
            .chain((start..i).rev().map(|k| (xs[k], lower[k])))
            .collect();
        chart
            .draw_series(std::iter::once(Polygon::new(outline, fill.filled())))
            .map_err(err)?;
    }
    Ok(())
}

fn paired(xs: &[f64], ys: &[f64]) -> Vec<(f64, f64)> {
    xs.iter().copied().zip(ys.iter().copied()).collect()
}

/// The fan chart of species `species` (state order): the band holding 90%
/// of the runs (5th to 95th percentile) and the middle 50% (25th to 75th)
/// shaded in the species' colour, the median as a line, the deterministic
/// model dashed and dark, and the kept runs as thin lines.
pub fn draw_fan<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    summary: &EnsembleSummary,
    species: usize,
    scale: f64,
) -> DrawResult {
    root.fill(&WHITE).map_err(err)?;
    let times = &summary.times;
    let fan = summary.fan.get(species);
    let deterministic = summary.deterministic.states.get(species);
    let kept: Vec<&Vec<f64>> = summary
        .kept_runs
        .iter()
        .filter_map(|r| r.states.get(species))
        .collect();
    let y_max = upper_bound(
        fan.into_iter()
            .flat_map(|f| f.p95.iter().chain(&f.median))
            .chain(deterministic.into_iter().flatten())
            .chain(kept.iter().copied().flatten())
            .copied(),
    );
    let name = summary
        .species
        .get(species)
        .cloned()
        .unwrap_or_else(|| format!("species {}", species + 1));
    let x_range = padded(extent(times.iter().copied()), 0.0);
    let x_label = format!("time ({})", summary.time_unit);
    let y_label = format!("{name} (individuals)");
    let mut chart = axes(
        root,
        scale,
        AxisDesc::linear(x_range, &x_label),
        AxisDesc::linear(0.0..y_max, &y_label),
    )?;
    let map = plot_map(&chart, false, false);
    let colour = SPECIES_COLOURS[species % 2];
    let (outer, inner) = (colour.mix(0.18), colour.mix(0.38));
    if let Some(f) = fan.filter(|f| !f.median.is_empty()) {
        band(&mut chart, times, &f.p05, &f.p95, outer)?;
        band(&mut chart, times, &f.p25, &f.p75, inner)?;
        legend_entry(&mut chart, "90% of runs", LegendSample::band(outer, scale))?;
        legend_entry(
            &mut chart,
            "middle 50% of runs",
            LegendSample::band(inner, scale),
        )?;
    }
    let thin = colour.mix(0.6).stroke_width(px(scale, 1.0));
    for run in &kept {
        draw_line(&mut chart, paired(times, run), thin, Dash::Solid, scale)?;
    }
    if !kept.is_empty() {
        legend_entry(
            &mut chart,
            "single runs",
            LegendSample::line(colour, px(scale, 1.0), Dash::Solid, scale),
        )?;
    }
    if let Some(f) = fan.filter(|f| !f.median.is_empty()) {
        let style = colour.stroke_width(px(scale, 2.5));
        draw_line(
            &mut chart,
            paired(times, &f.median),
            style,
            Dash::Solid,
            scale,
        )?;
        legend_entry(
            &mut chart,
            "median",
            LegendSample::line(colour, px(scale, 2.5), Dash::Solid, scale),
        )?;
    }
    if let Some(d) = deterministic.filter(|d| !d.is_empty()) {
        let style = INK.stroke_width(px(scale, 2.0));
        draw_line(&mut chart, paired(times, d), style, Dash::Dashed, scale)?;
        legend_entry(
            &mut chart,
            "deterministic model",
            LegendSample::line(INK, px(scale, 2.0), Dash::Dashed, scale),
        )?;
    }
    legend(&mut chart, scale, SeriesLabelPosition::UpperRight)?;
    let text = if summary.runs == 0 {
        "no finished runs yet".to_string()
    } else if summary.partial {
        format!("{} of {} runs so far", summary.runs, summary.requested)
    } else {
        format!("{} runs", summary.runs)
    };
    note(root, &map, 0, &text, scale)?;
    Ok(map)
}

/// Probability of extinction by each time, per species (solid, with the
/// species' colour and marker), and of quasi-extinction (falling below the
/// species' level; dashed), each with its 95% Wilson interval shaded; y
/// from 0 to 1.
pub fn draw_extinction_curves<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    summary: &EnsembleSummary,
    scale: f64,
) -> DrawResult {
    root.fill(&WHITE).map_err(err)?;
    let times = &summary.times;
    let x_range = padded(extent(times.iter().copied()), 0.0);
    let x_label = format!("time ({})", summary.time_unit);
    let mut chart = axes(
        root,
        scale,
        AxisDesc::linear(x_range, &x_label),
        AxisDesc::linear(0.0..1.0, "probability by this time"),
    )?;
    let map = plot_map(&chart, false, false);
    let index_of = |name: &str| summary.species.iter().position(|s| s == name);
    let curves = summary
        .extinction_by_time
        .iter()
        .enumerate()
        .map(|(i, c)| (i, c, Dash::Solid))
        .chain(
            summary
                .quasi_extinction_by_time
                .iter()
                .filter_map(|c| Some((index_of(&c.species)?, c, Dash::Dashed))),
        );
    let mut drawn = 0;
    for (i, curve, dash) in curves {
        if curve.probability.is_empty() {
            continue;
        }
        drawn += 1;
        let colour = SPECIES_COLOURS[i % 2];
        let marker = SPECIES_MARKERS[i % 2];
        band(
            &mut chart,
            times,
            &curve.lower,
            &curve.upper,
            colour.mix(0.15),
        )?;
        let points = paired(times, &curve.probability);
        let style = colour.stroke_width(px(scale, 2.0));
        draw_line(&mut chart, points.iter().copied(), style, dash, scale)?;
        let step = (points.len() / 8).max(1);
        let filled = dash == Dash::Solid;
        let along = points.iter().copied().skip(step / 2).step_by(step);
        draw_marks(&mut chart, &map, along, (marker, colour, filled), scale)?;
        let label = match curve.level {
            Some(level) => format!("{} below {}", curve.species, short(level)),
            None => format!("{} extinct", curve.species),
        };
        legend_entry(
            &mut chart,
            label,
            LegendSample::line(colour, px(scale, 2.0), dash, scale).with_marker(marker, filled),
        )?;
    }
    if drawn > 0 {
        legend(&mut chart, scale, SeriesLabelPosition::LowerRight)?;
    } else {
        note(root, &map, 0, "no finished runs yet", scale)?;
    }
    Ok(map)
}

/// The probability that the released species establishes against the
/// number of founders (log10 axis when they span a factor of 8 or more),
/// one series per number of releases, with 95% Wilson intervals as bars
/// (nudged sideways so series do not hide each other).
pub fn draw_establishment<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    table: &EstablishmentTable,
    scale: f64,
) -> DrawResult {
    root.fill(&WHITE).map_err(err)?;
    let founders = extent(table.rows.iter().map(|r| r.founders as f64));
    let log_x = founders.is_some_and(|(lo, hi)| lo > 0.0 && hi >= 8.0 * lo);
    let x = |f: u64| {
        if log_x {
            (f as f64).log10()
        } else {
            f as f64
        }
    };
    let x_range = padded(extent(table.rows.iter().map(|r| x(r.founders))), 0.06);
    let x_label = if log_x {
        format!("founders ({}, all releases; log scale)", table.species)
    } else {
        format!("founders ({}, all releases)", table.species)
    };
    let mut chart = axes(
        root,
        scale,
        AxisDesc::new(x_range, &x_label, log_x),
        AxisDesc::linear(0.0..1.0, "probability of establishment"),
    )?;
    let map = plot_map(&chart, log_x, false);
    let mut splits: Vec<u32> = table.rows.iter().map(|r| r.releases).collect();
    splits.sort_unstable();
    splits.dedup();
    let n_series = splits.len();
    for (k, &count) in splits.iter().enumerate() {
        let look = series_look(k);
        let mut rows: Vec<_> = table
            .rows
            .iter()
            .filter(|r| r.releases == count && r.probability.is_some())
            .collect();
        rows.sort_by_key(|r| r.founders);
        // Series side by side: nudged sideways by a few pixels, in data
        // units for the line and markers.
        let nudge = (k as f64 - (n_series as f64 - 1.0) / 2.0) * 5.0 * crate::usable_scale(scale);
        let per_pixel = (map.x.1 - map.x.0) / f64::from((map.pixels_x.1 - map.pixels_x.0).max(1));
        let shift = nudge * per_pixel;
        let bar = look.colour.stroke_width(px(scale, 1.5));
        let cap = px(scale, 3.0) as i32;
        for row in &rows {
            let Some([lo, hi]) = row.ci else { continue };
            let (bx, top) = map.pixel_of((x(row.founders), hi));
            let (_, bottom) = map.pixel_of((x(row.founders), lo));
            if !(bx.is_finite() && top.is_finite() && bottom.is_finite()) {
                continue;
            }
            let bx = (bx + nudge) as i32;
            let (top, bottom) = (top as i32, bottom as i32);
            for path in [
                vec![(bx, top), (bx, bottom)],
                vec![(bx - cap, top), (bx + cap, top)],
                vec![(bx - cap, bottom), (bx + cap, bottom)],
            ] {
                root.draw(&PathElement::new(path, bar)).map_err(err)?;
            }
        }
        let points: Vec<(f64, f64)> = rows
            .iter()
            .filter_map(|r| Some((x(r.founders) + shift, r.probability?)))
            .collect();
        let style = look.colour.stroke_width(px(scale, 2.0));
        draw_line(&mut chart, points.iter().copied(), style, look.dash, scale)?;
        draw_marks(
            &mut chart,
            &map,
            points,
            (look.marker, look.colour, true),
            scale,
        )?;
        legend_entry(
            &mut chart,
            releases(count),
            LegendSample::series(look, scale),
        )?;
    }
    if n_series > 0 {
        legend(&mut chart, scale, SeriesLabelPosition::LowerRight)?;
    }
    let rule = format!(
        "established: at least {} at {} {}; bars: 95% interval",
        short(table.level),
        short(table.horizon),
        table.time_unit
    );
    note(root, &map, 0, &rule, scale)?;
    if table.rows.iter().all(|r| r.probability.is_none()) {
        note(root, &map, 1, "no finished runs yet", scale)?;
    }
    Ok(map)
}

#[cfg(test)]
mod tests {
    //! Ensembles of the greenhouse mites (20 spider mites, one predatory
    //! mite) and founder rows of the reserve's marten, computed by the
    //! core. Interval ends are recomputed here from Wilson's score formula,
    //! (p̂ + z²/2n ± z√(p̂(1−p̂)/n + z²/4n²)) / (1 + z²/n) with
    //! z = Φ⁻¹(0.975) = 1.959964 (Wilson 1927, J. Amer. Statist. Assoc.
    //! 22:209; z from Abramowitz & Stegun 1964, table 26.5).

    use super::*;
    use crate::testing::{draw, hex, problem, Drawn, GREENHOUSE_MITES, RESERVE};
    use tussock_core::stochastic::{
        establishment, run_ensemble, EnsembleOptions, EstablishmentRequest,
    };

    const Z: f64 = 1.959_964;

    fn wilson(count: u64, n: u64) -> (f64, f64) {
        let (k, n) = (count as f64, n as f64);
        let p = k / n;
        let centre = p + Z * Z / (2.0 * n);
        let half = Z * (p * (1.0 - p) / n + Z * Z / (4.0 * n * n)).sqrt();
        let scale = 1.0 + Z * Z / n;
        ((centre - half) / scale, (centre + half) / scale)
    }

    fn ensemble(runs: u64) -> EnsembleSummary {
        let options = EnsembleOptions {
            runs,
            seed: 7,
            keep_runs: 5,
            max_intervals: 60,
            quasi_extinction: Some([Some(5.0), Some(2.0)]),
            ..EnsembleOptions::default()
        };
        run_ensemble(&problem(GREENHOUSE_MITES), &options, &mut |_, _| true).unwrap()
    }

    /// The one place the tests draw an ensemble: the fan of each species
    /// and the extinction curves.
    fn check(summary: &EnsembleSummary, name: &str) -> (Vec<Drawn>, Drawn) {
        let fans = (0..summary.species.len())
            .map(|i| {
                let drawn = draw(|root| draw_fan(root, summary, i, 1.0));
                drawn.keep(&format!("{name}-fan-{i}"));
                drawn
            })
            .collect();
        let curves = draw(|root| draw_extinction_curves(root, summary, 1.0));
        curves.keep(&format!("{name}-extinction"));
        (fans, curves)
    }

    #[test]
    fn fan_draws_bands_median_model_and_runs() {
        let summary = ensemble(40);
        let (fans, _) = check(&summary, "ensemble");
        let n = summary.times.len();
        for (i, fan) in fans.iter().enumerate() {
            let colour = hex(SPECIES_COLOURS[i]);
            // The median: one line, one point per summary time, at the
            // summary's values.
            let medians: Vec<_> = fan
                .polylines(&colour, 3)
                .into_iter()
                .filter(|l| l.len() == n)
                .collect();
            assert_eq!(medians.len(), 1, "species {i}");
            for (k, &p) in medians[0].iter().enumerate() {
                let (t, y) = fan.data_at(p);
                let pixel_y = (fan.map.y.1 - fan.map.y.0) / 460.0;
                assert!((t - summary.times[k]).abs() < 0.3, "{t}");
                assert!((y - summary.fan[i].median[k]).abs() <= 1.5 * pixel_y, "{y}");
            }
            // Two bands in the species' colour, the outer paler.
            let mut opacities: Vec<f64> = fan.polygons(&colour).iter().map(|p| p.1).collect();
            opacities.sort_by(f64::total_cmp);
            opacities.dedup();
            assert_eq!(opacities, [0.18, 0.38], "species {i}");
            // The model, dashed and dark; the kept runs, thin.
            assert!(fan.polylines(&hex(INK), 2).len() > 10);
            let thin = format!("opacity=\"0.6\" stroke=\"{colour}\" stroke-width=\"1\"");
            assert_eq!(fan.svg.matches(&thin).count(), summary.kept_runs.len());
            assert!(fan.has_text("40 runs") && fan.has_text("time (days)"));
        }
    }

    #[test]
    fn extinction_bands_are_wilson_intervals() {
        let summary = ensemble(40);
        let (_, curves) = check(&summary, "ensemble");
        assert!(curves.has_text("predatory mite extinct"));
        assert!(curves.has_text("spider mite below 5"));
        // The band of each curve at the horizon spans the Wilson interval
        // of its count at the horizon.
        let end = summary.times.len() - 1;
        let at_horizon = |colour: &str, opacity: f64| -> Vec<(f64, f64)> {
            curves
                .polygons(colour)
                .iter()
                .filter(|p| (p.1 - opacity).abs() < 1e-9)
                .filter_map(|(points, _)| {
                    let ys: Vec<f64> = points
                        .iter()
                        .map(|&p| curves.data_at(p))
                        .filter(|(t, _)| (t - summary.horizon).abs() < 0.2)
                        .map(|(_, y)| y)
                        .collect();
                    let lo = ys.iter().copied().fold(f64::INFINITY, f64::min);
                    let hi = ys.iter().copied().fold(f64::NEG_INFINITY, f64::max);
                    (!ys.is_empty()).then_some((lo, hi))
                })
                .collect()
        };
        let pixel = 1.0 / 460.0;
        for (i, p) in summary.extinction.iter().enumerate() {
            let (lo, hi) = wilson(p.count, p.runs);
            let bands = at_horizon(&hex(SPECIES_COLOURS[i]), 0.15);
            assert!(
                bands
                    .iter()
                    .any(|b| (b.0 - lo).abs() < 2.0 * pixel && (b.1 - hi).abs() < 2.0 * pixel),
                "species {i}: {bands:?} against ({lo}, {hi}); curve {:?}",
                summary.extinction_by_time[i].upper[end]
            );
        }
    }

    #[test]
    fn one_run_no_runs_and_odd_numbers_do_not_break_them() {
        let one = ensemble(1);
        let (fans, _) = check(&one, "ensemble-one");
        assert!(fans[0].has_text("1 runs") || fans[0].has_text("1 run"));
        let mut none = one.clone();
        none.runs = 0;
        for f in &mut none.fan {
            f.median.clear();
            f.p05.clear();
            f.p95.clear();
        }
        for c in none
            .extinction_by_time
            .iter_mut()
            .chain(&mut none.quasi_extinction_by_time)
        {
            c.probability.clear();
        }
        let (fans, curves) = check(&none, "ensemble-none");
        assert!(fans[1].has_text("no finished runs yet"));
        assert!(curves.has_text("no finished runs yet"));
        let mut odd = one;
        odd.fan[0].median[3] = f64::NAN;
        odd.fan[0].p95[4] = f64::INFINITY;
        odd.fan[1].p25.truncate(2);
        odd.extinction_by_time[0].upper[2] = f64::NAN;
        odd.deterministic.states[1].push(f64::NEG_INFINITY);
        odd.kept_runs[0].states[0][1] = f64::NAN;
        odd.times[0] = f64::NAN;
        check(&odd, "ensemble-odd");
        // A species index past the end: axes only.
        draw(|root| draw_fan(root, &odd, 5, 2.0));
    }

    fn founders() -> EstablishmentTable {
        let request = EstablishmentRequest {
            founders: vec![2, 4, 8, 16, 32],
            releases: vec![1, 2],
            horizon: Some(10.0),
            runs: 30,
            seed: 11,
            ..EstablishmentRequest::default()
        };
        establishment(&problem(RESERVE), &request, &mut |_, _| true).unwrap()
    }

    #[test]
    fn establishment_bars_are_wilson_intervals() {
        let table = founders();
        let drawn = draw(|root| draw_establishment(root, &table, 1.0));
        drawn.keep("establishment");
        assert!(drawn.map.log_x, "2 to 32 founders: a log axis");
        assert!(drawn.has_text("1 release") && drawn.has_text("2 releases"));
        // Bars: vertical strokes in the series' colour, from the lower to
        // the upper end of each row's interval.
        for (k, count) in [1u32, 2].into_iter().enumerate() {
            let colour = hex(series_look(k).colour);
            let bars: Vec<(f64, f64, f64)> = drawn
                .polylines(&colour, 2)
                .into_iter()
                .filter(|l| l.len() == 2 && l[0].0 == l[1].0)
                .map(|l| {
                    let (x, a) = drawn.data_at(l[0]);
                    let (_, b) = drawn.data_at(l[1]);
                    (x, a.min(b), a.max(b))
                })
                .collect();
            for row in table.rows.iter().filter(|r| r.releases == count) {
                let (lo, hi) = wilson(row.established_runs, row.runs);
                let found = bars.iter().any(|&(x, a, b)| {
                    (x / row.founders as f64 - 1.0).abs() < 0.05
                        && (a - lo).abs() < 0.006
                        && (b - hi).abs() < 0.006
                });
                assert!(
                    found,
                    "{} founders, {count}: ({lo}, {hi}) in {bars:?}",
                    row.founders
                );
            }
        }
        let mut odd = table.clone();
        odd.rows[0].probability = Some(f64::NAN);
        odd.rows[1].ci = Some([f64::INFINITY, -1.0]);
        odd.rows[2].founders = 0;
        draw(|root| draw_establishment(root, &odd, 1.0));
        odd.rows.clear();
        assert!(draw(|root| draw_establishment(root, &odd, 1.0)).has_text("no finished runs yet"));
    }
}
