//! The figures the page shows, as values: what to draw, how to describe
//! the point under the pointer, and what to call a downloaded file. Drawing
//! itself lives in `tussock-charts`, generic over the backend, so a figure
//! goes to the page's canvas, to an SVG download and to a PNG download
//! through the same code.

use std::rc::Rc;

use tussock_charts::{AreaShift, DrawResult, DrawingArea, DrawingBackend};
use tussock_core::analysis::round_sig;

use crate::state::Run;

/// Size of exported figures, in CSS pixels (PNG doubles it).
pub const EXPORT_SIZE: (u32, u32) = (900, 520);

/// One chart and the data it shows. Payloads are shared and immutable, so
/// comparing two figures is cheap.
#[derive(Clone, Debug, PartialEq)]
pub enum Figure {
    TimeSeries { run: Rc<Run>, log_y: bool },
    PhasePlane { run: Rc<Run> },
}

impl Figure {
    pub fn draw<DB: DrawingBackend>(
        &self,
        root: &DrawingArea<DB, AreaShift>,
        scale: f64,
    ) -> DrawResult {
        match self {
            Figure::TimeSeries { run, log_y } => {
                tussock_charts::draw_time_series(root, run, scale, *log_y)
            }
            Figure::PhasePlane { run } => tussock_charts::draw_phase_plane(root, run, scale),
        }
    }

    /// Whether clicking the plotting area means something.
    pub fn clickable(&self) -> bool {
        matches!(self, Figure::PhasePlane { .. })
    }

    /// A file name without extension for downloads.
    pub fn file_stem(&self) -> String {
        let (run, what) = match self {
            Figure::TimeSeries { run, .. } => (run, "densities"),
            Figure::PhasePlane { run } => (run, "phase-plane"),
        };
        format!("{}-{what}", slug(&run.problem.species.join("-")))
    }

    /// The figure as an SVG document.
    pub fn to_svg(&self) -> Result<String, String> {
        tussock_charts::to_svg(EXPORT_SIZE.0, EXPORT_SIZE.1, |root| self.draw(root, 1.0))
    }

    /// Readout for the point under the pointer, in data coordinates.
    pub fn describe_point(&self, x: f64, y: f64) -> String {
        match self {
            Figure::TimeSeries { run, .. } => {
                let traj = &run.trajectory;
                let p = &run.problem;
                let Some(i) = traj
                    .times
                    .iter()
                    .enumerate()
                    .min_by(|a, b| (a.1 - x).abs().total_cmp(&(b.1 - x).abs()))
                    .map(|(i, _)| i)
                else {
                    return String::new();
                };
                let values: Vec<String> = (0..traj.n_species)
                    .map(|k| format!("{} {}", p.species[k], round_sig(traj.states[i][k], 4)))
                    .collect();
                format!(
                    "t = {} {}: {}",
                    round_sig(traj.times[i], 4),
                    p.time_unit,
                    values.join(", ")
                )
            }
            Figure::PhasePlane { run } => {
                let p = &run.problem;
                format!(
                    "{} {}, {} {} — click to start a trajectory here",
                    p.species[0],
                    round_sig(x, 4),
                    p.species[1],
                    round_sig(y, 4)
                )
            }
        }
    }
}

/// Lower-case letters, digits and single dashes, for file names.
pub fn slug(text: &str) -> String {
    let mut out = String::new();
    for c in text.chars() {
        if c.is_ascii_alphanumeric() {
            out.push(c.to_ascii_lowercase());
        } else if !out.ends_with('-') && !out.is_empty() {
            out.push('-');
        }
    }
    let out = out.trim_end_matches('-').to_string();
    if out.is_empty() {
        "tussock".to_string()
    } else {
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::state::Workbench;

    /// Polylines drawn in a colour, as lists of points.
    fn polylines(svg: &str, colour: &str) -> Vec<usize> {
        let doc = roxmltree::Document::parse(svg).expect("the SVG parses as XML");
        doc.descendants()
            .filter(|n| n.has_tag_name("polyline") && n.attribute("stroke") == Some(colour))
            .map(|n| {
                n.attribute("points")
                    .unwrap_or("")
                    .split_whitespace()
                    .count()
            })
            .collect()
    }

    #[test]
    fn exported_svg_parses_and_holds_each_species_line() {
        let bench = Workbench::starting();
        let svg = Figure::TimeSeries {
            run: bench.run.clone(),
            log_y: false,
        }
        .to_svg()
        .unwrap();
        for name in &bench.run.problem.species {
            assert!(
                svg.contains(name.as_str()),
                "{name} missing from the legend"
            );
        }
        let n = bench.run.trajectory.times.len();
        // The first species is one solid line through every output time.
        let first = polylines(&svg, "#0072B2");
        assert!(
            first.contains(&n),
            "no single line of {n} points: {first:?}"
        );
        // The second is dashed: its dashes together span the whole series.
        let second = polylines(&svg, "#D55E00");
        assert!(second.len() > 10, "second species should be dashed");
        assert!(second.iter().sum::<usize>() >= n / 2);
    }

    #[test]
    fn file_names_are_plain() {
        assert_eq!(
            slug("Spider mite / predatory mite"),
            "spider-mite-predatory-mite"
        );
        assert_eq!(slug("<script>"), "script");
        assert_eq!(slug("∅"), "tussock");
    }
}
