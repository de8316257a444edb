//! Test helpers shared by the figure modules: scenarios from the project's
//! example files, and the drawn SVG read back with `roxmltree` (an
//! independent XML parser) as shapes in pixel coordinates.

use tussock_core::{Problem, Scenario};

use crate::{to_svg, DrawResult, PlotMap};

/// The greenhouse example: spider mite (pest) and predatory mite,
/// Rosenzweig–MacArthur with a type II response, economic threshold 10.
pub const GREENHOUSE_PLAN: &str = include_str!("../../examples/greenhouse-plan.json");
/// The same pair over 120 days, both present from the start.
pub const GREENHOUSE_MITES: &str = include_str!("../../examples/greenhouse-mites.json");
/// A prey and a reintroduced predator, in years.
pub const RESERVE: &str = include_str!("../../examples/reserve-reintroduction.json");

pub fn scenario(json: &str) -> Scenario {
    Scenario::from_json(json).expect("an example scenario parses")
}

pub fn problem(json: &str) -> Problem {
    scenario(json)
        .validate()
        .expect("an example scenario is valid")
}

/// A drawn figure: its SVG text, parsed, and where the data sit.
pub struct Drawn {
    pub svg: String,
    pub map: PlotMap,
}

/// Draw into an SVG 900 × 520 (the app's export size) at scale 1; the
/// drawing must succeed and the SVG must parse.
pub fn draw<F>(draw: F) -> Drawn
where
    F: FnOnce(
        &crate::DrawingArea<plotters::prelude::SVGBackend<'_>, crate::AreaShift>,
    ) -> DrawResult,
{
    let mut map = None;
    let svg = to_svg(900, 520, |root| {
        let m = draw(root)?;
        map = Some(m);
        Ok(m)
    })
    .expect("the figure draws");
    roxmltree::Document::parse(&svg).expect("the SVG parses as XML");
    Drawn {
        svg,
        map: map.expect("a plot map"),
    }
}

/// Colour as plotters writes it in SVG: `#RRGGBB`.
pub fn hex(c: plotters::prelude::RGBColor) -> String {
    format!("#{:02X}{:02X}{:02X}", c.0, c.1, c.2)
}

fn number(node: &roxmltree::Node<'_, '_>, name: &str) -> f64 {
    node.attribute(name)
        .and_then(|v| v.parse().ok())
        .unwrap_or(f64::NAN)
}

fn opaque(node: &roxmltree::Node<'_, '_>) -> bool {
    node.attribute("opacity")
        .and_then(|v| v.parse::<f64>().ok())
        .is_none_or(|o| o >= 1.0)
}

impl Drawn {
    fn doc(&self) -> roxmltree::Document<'_> {
        roxmltree::Document::parse(&self.svg).expect("the SVG parses as XML")
    }

    /// How many rectangles are filled with each colour (one pass).
    pub fn rect_fills(&self) -> std::collections::HashMap<String, usize> {
        let mut counts = std::collections::HashMap::new();
        for n in self.doc().descendants().filter(|n| n.has_tag_name("rect")) {
            if let Some(fill) = n.attribute("fill") {
                *counts.entry(fill.to_string()).or_default() += 1;
            }
        }
        counts
    }

    /// Filled rectangles of a colour: (x, y, width, height).
    pub fn rects(&self, fill: &str) -> Vec<[f64; 4]> {
        self.doc()
            .descendants()
            .filter(|n| n.has_tag_name("rect") && n.attribute("fill") == Some(fill))
            .map(|n| {
                [
                    number(&n, "x"),
                    number(&n, "y"),
                    number(&n, "width"),
                    number(&n, "height"),
                ]
            })
            .collect()
    }

    /// Opaque polylines of a stroke colour and width, as pixel points.
    pub fn polylines(&self, stroke: &str, width: u32) -> Vec<Vec<(f64, f64)>> {
        self.doc()
            .descendants()
            .filter(|n| {
                n.has_tag_name("polyline")
                    && n.attribute("stroke") == Some(stroke)
                    && n.attribute("stroke-width") == Some(width.to_string().as_str())
                    && opaque(n)
            })
            .map(|n| {
                n.attribute("points")
                    .unwrap_or("")
                    .split_whitespace()
                    .filter_map(|p| {
                        let (x, y) = p.split_once(',')?;
                        Some((x.parse().ok()?, y.parse().ok()?))
                    })
                    .collect()
            })
            .collect()
    }

    /// Filled circles of a colour: (cx, cy, r).
    pub fn circles(&self, fill: &str) -> Vec<(f64, f64, f64)> {
        self.doc()
            .descendants()
            .filter(|n| n.has_tag_name("circle") && n.attribute("fill") == Some(fill))
            .map(|n| (number(&n, "cx"), number(&n, "cy"), number(&n, "r")))
            .collect()
    }

    /// Filled polygons of a colour, with their opacity.
    pub fn polygons(&self, fill: &str) -> Vec<(Vec<(f64, f64)>, f64)> {
        self.doc()
            .descendants()
            .filter(|n| n.has_tag_name("polygon") && n.attribute("fill") == Some(fill))
            .map(|n| {
                let points = n
                    .attribute("points")
                    .unwrap_or("")
                    .split_whitespace()
                    .filter_map(|p| {
                        let (x, y) = p.split_once(',')?;
                        Some((x.parse().ok()?, y.parse().ok()?))
                    })
                    .collect();
                let opacity = n
                    .attribute("opacity")
                    .and_then(|v| v.parse().ok())
                    .unwrap_or(1.0);
                (points, opacity)
            })
            .collect()
    }

    /// Every text drawn.
    pub fn texts(&self) -> Vec<String> {
        self.doc()
            .descendants()
            .filter(|n| n.has_tag_name("text"))
            .map(|n| n.text().unwrap_or("").to_string())
            .collect()
    }

    /// Write the SVG to `$TUSSOCK_CHARTS_KEEP/<name>.svg` when that is set,
    /// to look at the figures by eye.
    pub fn keep(&self, name: &str) {
        if let Some(dir) = std::env::var_os("TUSSOCK_CHARTS_KEEP") {
            let path = std::path::Path::new(&dir).join(format!("{name}.svg"));
            std::fs::write(path, &self.svg).expect("the SVG is written");
        }
    }

    pub fn has_text(&self, wanted: &str) -> bool {
        self.texts().iter().any(|t| t.contains(wanted))
    }

    /// Data coordinates of a pixel, through the returned plot map.
    pub fn data_at(&self, (x, y): (f64, f64)) -> (f64, f64) {
        self.map
            .to_data(x, y)
            .unwrap_or_else(|| panic!("pixel ({x}, {y}) is off the plotting area"))
    }
}
