//! Tussock's figures, drawn by functions generic over plotters'
//! `DrawingBackend`: the canvas in the browser, SVG downloads and the command
//! line's `--out` figures share one drawing code.
//!
//! `scale` is the device pixel ratio: the backend is sized in device pixels,
//! and fonts, margins and line widths are multiplied by `scale` so charts are
//! crisp and equally proportioned at any ratio. Each function returns the
//! [`PlotMap`] from data to pixels, so the page can turn a click or a hover
//! back into data coordinates.

use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
pub use plotters::coord::Shift as AreaShift;
use plotters::prelude::*;
pub use plotters::prelude::{DrawingArea, DrawingBackend};

pub mod workbench;

pub use workbench::{draw_phase_plane, draw_time_series};

/// Line colours: Okabe & Ito (2008) colour-blind-safe palette (blue,
/// vermillion). Species also differ by line style (solid, dashed).
pub const SPECIES_COLOURS: [RGBColor; 2] = [RGBColor(0, 114, 178), RGBColor(213, 94, 0)];
pub(crate) const INK: RGBColor = RGBColor(40, 40, 40);
pub(crate) const FIELD: RGBColor = RGBColor(170, 170, 170);
/// Extra trajectories started by clicks: Okabe & Ito bluish green.
pub(crate) const EXTRA: RGBColor = RGBColor(0, 158, 115);

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

pub type DrawResult = Result<PlotMap, String>;
pub(crate) type Chart<'a, DB> = ChartContext<'a, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

pub(crate) fn err<E: std::fmt::Debug>(e: E) -> String {
    format!("{e:?}")
}

pub(crate) fn px(scale: f64, css_px: f64) -> u32 {
    (css_px * scale).round().max(1.0) as u32
}

pub(crate) fn upper_bound(values: impl Iterator<Item = f64>) -> f64 {
    let max = values.filter(|v| v.is_finite()).fold(0.0_f64, f64::max);
    if max > 0.0 {
        max * 1.05
    } else {
        1.0
    }
}

/// A chart area with both axes drawn and labelled.
pub(crate) fn axes<'a, DB: DrawingBackend>(
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

pub(crate) fn plot_map<DB: DrawingBackend>(chart: &Chart<'_, DB>, log_y: bool) -> PlotMap {
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

/// Draw a figure into an SVG document `width` × `height` pixels; the same
/// drawing functions as the canvas, at scale 1.
pub fn to_svg(
    width: u32,
    height: u32,
    draw: impl FnOnce(&DrawingArea<SVGBackend<'_>, Shift>) -> DrawResult,
) -> Result<String, String> {
    let mut svg = String::new();
    {
        let root =
            SVGBackend::with_string(&mut svg, (width.max(1), height.max(1))).into_drawing_area();
        draw(&root)?;
        root.present().map_err(err)?;
    }
    Ok(svg)
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
