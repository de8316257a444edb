//! Comparing variants of a scenario: one species over time in each.

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};
use tussock_core::run::Run;

use crate::{
    axes, draw_line, err, font_size, legend, legend_entry, note, plot_map, px, series_look,
    text_at, upper_bound, AxisDesc, Dash, DrawResult, LegendSample, INK,
};

/// The density of species `species` (state order) against time in several
/// named runs, the first being the current scenario: a colour and a line
/// pattern per variant, the names in the legend. The current scenario's
/// economic threshold is drawn when it has one and `species` is its pest.
/// A variant without that species is left out, with a note.
pub fn draw_variants<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    variants: &[(&str, &Run)],
    species: usize,
    scale: f64,
) -> DrawResult {
    root.fill(&WHITE).map_err(err)?;
    let usable: Vec<(usize, &str, &Run)> = variants
        .iter()
        .enumerate()
        .filter(|(_, (_, run))| species < run.trajectory.n_species)
        .map(|(k, (name, run))| (k, *name, *run))
        .collect();
    let current = variants.first().map(|(_, run)| *run);
    let threshold = current
        .filter(|run| run.problem.thresholds.pest == species)
        .and_then(|run| run.problem.thresholds.economic_threshold)
        .filter(|t| t.is_finite());
    let t_end = usable
        .iter()
        .flat_map(|(_, _, run)| run.trajectory.times.last().copied())
        .chain(current.map(|run| run.problem.t_end))
        .filter(|t| t.is_finite() && *t > 0.0)
        .fold(0.0, f64::max);
    let t_end = if t_end > 0.0 { t_end } else { 1.0 };
    let y_max = upper_bound(
        usable
            .iter()
            .flat_map(|(_, _, run)| run.trajectory.series(species))
            .chain(threshold),
    );
    let name = current
        .and_then(|run| run.problem.species.get(species).cloned())
        .unwrap_or_else(|| format!("species {}", species + 1));
    let unit = current.map_or("", |run| run.problem.time_unit.as_str());
    let x_label = format!("time ({unit})");
    let y_label = format!("{name} (individuals)");
    let mut chart = axes(
        root,
        scale,
        AxisDesc::linear(0.0..t_end, &x_label),
        AxisDesc::linear(0.0..y_max, &y_label),
    )?;
    let map = plot_map(&chart, false, false);
    if let Some(level) = threshold {
        let style = INK.stroke_width(px(scale, 1.5));
        draw_line(
            &mut chart,
            [(0.0, level), (t_end, level)],
            style,
            Dash::Long,
            scale,
        )?;
        let (x, y) = map.pixel_of((0.0, level));
        text_at(
            root,
            "economic threshold",
            (
                x as i32 + px(scale, 4.0) as i32,
                y as i32 - px(scale, 2.0) as i32,
            ),
            (HPos::Left, VPos::Bottom),
            font_size(scale, 11.0),
            INK,
        )?;
    }
    for &(k, name, run) in &usable {
        let look = series_look(k);
        let width = if k == 0 { 2.5 } else { 2.0 };
        let points = run
            .trajectory
            .times
            .iter()
            .copied()
            .zip(run.trajectory.series(species));
        let style = look.colour.stroke_width(px(scale, width));
        draw_line(&mut chart, points, style, look.dash, scale)?;
        legend_entry(
            &mut chart,
            name,
            LegendSample::line(look.colour, px(scale, width), look.dash, scale),
        )?;
    }
    if usable.is_empty() {
        note(root, &map, 0, "no runs to compare", scale)?;
    } else {
        legend(&mut chart, scale, SeriesLabelPosition::UpperRight)?;
    }
    let skipped: Vec<&str> = variants
        .iter()
        .filter(|(_, run)| species >= run.trajectory.n_species)
        .map(|(name, _)| *name)
        .collect();
    if !skipped.is_empty() {
        let text = format!("without {name}: {}", skipped.join(", "));
        note(root, &map, usize::from(usable.is_empty()), &text, scale)?;
    }
    Ok(map)
}

#[cfg(test)]
mod tests {
    //! The greenhouse plan (spider mite with economic threshold 10) against
    //! variants. With no predator the pest grows logistically, N(t) =
    //! K / (1 + (K/N₀ − 1) e^(−rt)) (Verhulst 1838), N₀ = 2, K = 150,
    //! r = 0.25: the current scenario's line must follow it.

    use super::*;
    use crate::fit::tests::census_scenario;
    use crate::testing::{draw, hex, scenario, Drawn, GREENHOUSE_PLAN};
    use tussock_core::events::EventSpec;

    fn run(json_edit: impl FnOnce(&mut tussock_core::Scenario)) -> Run {
        let mut s = scenario(GREENHOUSE_PLAN);
        json_edit(&mut s);
        Run::compute(s.validate().unwrap(), &[])
    }

    /// The one place the tests draw variants.
    fn check(variants: &[(&str, &Run)], species: usize, name: &str) -> Drawn {
        let drawn = draw(|root| draw_variants(root, variants, species, 1.0));
        drawn.keep(name);
        drawn
    }

    #[test]
    fn variants_overlay_with_the_current_threshold() {
        let current = run(|_| {});
        let released = run(|s| {
            s.events = vec![EventSpec {
                time: 7.0,
                species: 1,
                add: Some(2.0),
                ..EventSpec::default()
            }]
        });
        let crowded = run(|s| {
            s.params.insert("K".into(), 300.0);
        });
        let variants = [
            ("as set", &current),
            ("release on day 7", &released),
            ("K = 300", &crowded),
        ];
        let drawn = check(&variants, 0, "variants");
        for (name, _) in variants {
            assert!(drawn.has_text(name), "{name} not in the legend");
        }
        assert!(drawn.has_text("economic threshold"));
        // The current scenario: one solid line, every output time, on
        // Verhulst's curve.
        let n = current.trajectory.times.len();
        let lines: Vec<Vec<(f64, f64)>> = drawn
            .polylines(&hex(series_look(0).colour), 3)
            .into_iter()
            .filter(|l| l.len() == n)
            .collect();
        assert_eq!(lines.len(), 1);
        let span = drawn.map.y.1 - drawn.map.y.0;
        for &p in lines[0].iter().step_by(17) {
            let (t, y) = drawn.data_at(p);
            let logistic = 150.0 / (1.0 + 74.0 * f64::exp(-0.25 * t));
            // A pixel of time either way moves a steep curve further.
            let slope = 0.25 * logistic * (1.0 - logistic / 150.0);
            let tolerance = 2.0 * span / 460.0 + slope * 2.0 * drawn.map.x.1 / 800.0;
            assert!(
                (y - logistic).abs() <= tolerance,
                "t = {t}: {y} vs {logistic}"
            );
        }
        // The others dashed: many short pieces in their colours.
        for k in 1..3 {
            let dashes = drawn.polylines(&hex(series_look(k).colour), 2).len();
            assert!(dashes > 20, "variant {k}: {dashes} dashes");
        }
        // The threshold at 10, long-dashed and dark.
        let level: Vec<f64> = drawn
            .polylines("#282828", 2)
            .iter()
            .filter(|l| l.len() == 2 && l[0].1 == l[1].1)
            .map(|l| drawn.data_at(l[0]).1)
            .collect();
        assert!(
            level.iter().any(|y| (y - 10.0).abs() < span / 460.0),
            "{level:?}"
        );
        // The predator's chart has no threshold (it belongs to the pest).
        let predator = check(&variants, 1, "variants-predator");
        assert!(!predator.has_text("economic threshold"));
    }

    #[test]
    fn missing_species_and_no_variants_are_said() {
        let current = run(|_| {});
        let single = Run::compute(census_scenario().validate().unwrap(), &[]);
        let drawn = check(
            &[("as set", &current), ("one species", &single)],
            1,
            "variants-missing",
        );
        assert!(drawn.has_text("without predatory mite: one species"));
        assert!(check(&[], 0, "variants-none").has_text("no runs to compare"));
        check(&[("only", &single)], 4, "variants-nothing");
    }
}
