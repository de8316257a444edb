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
use plotters::element::{Drawable, PointCollection};
use plotters::prelude::*;
pub use plotters::prelude::{DrawingArea, DrawingBackend, RGBColor};
use plotters::style::text_anchor::{HPos, Pos, VPos};
use plotters_backend::{BackendCoord, DrawingErrorKind};

pub mod compare;
pub mod fit;
pub mod plan;
pub mod record;
pub mod stochastic;
pub mod sweep;
pub mod tables;

/// Lower-case letters, digits and single dashes, for file names; `fallback`
/// when nothing is left.
pub fn slug(text: &str, fallback: &str) -> String {
    let mut out = String::new();
    for c in text.chars() {
        if c.is_ascii_alphanumeric() {
            out.push(c.to_ascii_lowercase());
        } else if !out.is_empty() && !out.ends_with('-') {
            out.push('-');
        }
    }
    let out = out.trim_end_matches('-');
    if out.is_empty() {
        fallback.to_string()
    } else {
        out.to_string()
    }
}
#[cfg(test)]
mod testing;
pub mod workbench;

pub use compare::draw_variants;
pub use fit::draw_residuals;
pub use plan::{draw_release_timing, draw_response_curves};
pub use stochastic::{draw_establishment, draw_extinction_curves, draw_fan};
pub use sweep::{
    bifurcation_label, class_colour, class_label, draw_bifurcation, draw_outcome_map,
    legend_classes,
};
pub use workbench::{draw_phase_plane, draw_time_series};

/// Line colours: Okabe & Ito (2008) colour-blind-safe palette (blue,
/// vermillion). Species also differ by line style (solid, dashed) and
/// marker (circle, triangle).
pub const SPECIES_COLOURS: [RGBColor; 2] = [OKABE_ITO.blue, OKABE_ITO.vermillion];
pub(crate) const INK: RGBColor = RGBColor(40, 40, 40);
pub(crate) const FIELD: RGBColor = RGBColor(170, 170, 170);
/// Extra trajectories started by clicks: Okabe & Ito bluish green.
pub(crate) const EXTRA: RGBColor = OKABE_ITO.bluish_green;

/// The eight colours of Okabe & Ito (2008), "Color Universal Design",
/// as published (sRGB 0–255).
pub(crate) struct OkabeIto {
    pub black: RGBColor,
    pub orange: RGBColor,
    pub sky_blue: RGBColor,
    pub bluish_green: RGBColor,
    pub yellow: RGBColor,
    pub blue: RGBColor,
    pub vermillion: RGBColor,
    pub reddish_purple: RGBColor,
}

pub(crate) const OKABE_ITO: OkabeIto = OkabeIto {
    black: RGBColor(0, 0, 0),
    orange: RGBColor(230, 159, 0),
    sky_blue: RGBColor(86, 180, 233),
    bluish_green: RGBColor(0, 158, 115),
    yellow: RGBColor(240, 228, 66),
    blue: RGBColor(0, 114, 178),
    vermillion: RGBColor(213, 94, 0),
    reddish_purple: RGBColor(204, 121, 167),
};

/// Colours of the k-th series of a figure with many (rows of a plan,
/// variants): Okabe & Ito without yellow, which is too pale for lines on
/// white.
pub(crate) const SERIES_COLOURS: [RGBColor; 7] = [
    OKABE_ITO.blue,
    OKABE_ITO.vermillion,
    OKABE_ITO.bluish_green,
    OKABE_ITO.reddish_purple,
    OKABE_ITO.orange,
    OKABE_ITO.sky_blue,
    OKABE_ITO.black,
];

/// Marker shapes, so series differ by more than colour.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum Marker {
    Circle,
    Triangle,
    Square,
    Diamond,
    Cross,
}

const MARKERS: [Marker; 5] = [
    Marker::Circle,
    Marker::Triangle,
    Marker::Square,
    Marker::Diamond,
    Marker::Cross,
];

/// Species' markers (in state order), matching their line styles.
pub(crate) const SPECIES_MARKERS: [Marker; 2] = [Marker::Circle, Marker::Triangle];

/// Line patterns.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum Dash {
    Solid,
    Dashed,
    Dotted,
    Long,
}

const DASHES: [Dash; 4] = [Dash::Solid, Dash::Dashed, Dash::Dotted, Dash::Long];

/// How one series looks: colour, marker and line pattern all differ from
/// the neighbouring series'.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct Look {
    pub colour: RGBColor,
    pub marker: Marker,
    pub dash: Dash,
}

/// The look of series `k`; the first 28 looks are all different.
pub(crate) fn series_look(k: usize) -> Look {
    Look {
        colour: SERIES_COLOURS[k % SERIES_COLOURS.len()],
        marker: MARKERS[k % MARKERS.len()],
        dash: DASHES[k % DASHES.len()],
    }
}

/// Where the data sit on the backend, in backend pixels.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PlotMap {
    pub pixels_x: (i32, i32),
    pub pixels_y: (i32, i32),
    pub x: (f64, f64),
    pub y: (f64, f64),
    /// Whether x is drawn as log10 of the value (then `x` holds log10s).
    pub log_x: bool,
    /// Whether y is drawn as log10 of the value (then `y` holds log10s).
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
        let undo = |v: f64, log: bool| if log { 10f64.powf(v) } else { v };
        Some((undo(x, self.log_x), undo(y, self.log_y)))
    }

    /// Backend pixel of a point in drawn coordinates (log10s on log axes),
    /// not clamped to the plotting area.
    pub(crate) fn pixel_of(&self, (x, y): (f64, f64)) -> (f64, f64) {
        let (x0, x1) = (f64::from(self.pixels_x.0), f64::from(self.pixels_x.1));
        let (y0, y1) = (f64::from(self.pixels_y.0), f64::from(self.pixels_y.1));
        let fx = (x - self.x.0) / (self.x.1 - self.x.0);
        let fy = (y - self.y.0) / (self.y.1 - self.y.0);
        (x0 + fx * (x1 - x0), y1 - fy * (y1 - y0))
    }

    /// Whether a point in drawn coordinates lies on the plotting area.
    pub(crate) fn holds(&self, (x, y): (f64, f64)) -> bool {
        let within = |v: f64, (a, b): (f64, f64)| v >= a.min(b) && v <= a.max(b);
        within(x, self.x) && within(y, self.y)
    }
}

pub type DrawResult = Result<PlotMap, String>;
pub(crate) type Chart<'a, DB> = ChartContext<'a, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

pub(crate) fn err<E: std::fmt::Debug>(e: E) -> String {
    format!("{e:?}")
}

/// The device pixel ratio as used: 1 when it is not a positive number, at
/// most 16.
pub(crate) fn usable_scale(scale: f64) -> f64 {
    if scale.is_finite() && scale > 0.0 {
        scale.clamp(0.1, 16.0)
    } else {
        1.0
    }
}

pub(crate) fn px(scale: f64, css_px: f64) -> u32 {
    (css_px * usable_scale(scale)).round().max(1.0) as u32
}

/// A font size in backend pixels.
pub(crate) fn font_size(scale: f64, css_px: f64) -> f64 {
    f64::from(px(scale, css_px * 10.0)) / 10.0
}

pub(crate) fn upper_bound(values: impl Iterator<Item = f64>) -> f64 {
    let max = values.filter(|v| v.is_finite()).fold(0.0_f64, f64::max);
    if max > 0.0 {
        max * 1.05
    } else {
        1.0
    }
}

/// Smallest and largest finite value, if any.
pub(crate) fn extent(values: impl Iterator<Item = f64>) -> Option<(f64, f64)> {
    values
        .filter(|v| v.is_finite())
        .fold(None, |acc, v| match acc {
            None => Some((v, v)),
            Some((lo, hi)) => Some((lo.min(v), hi.max(v))),
        })
}

/// A drawable range from an extent: finite, non-empty, padded by
/// `pad` of its width on each side (a single value gets room around it).
pub(crate) fn padded(extent: Option<(f64, f64)>, pad: f64) -> std::ops::Range<f64> {
    let Some((lo, hi)) = extent.filter(|(lo, hi)| lo.is_finite() && hi.is_finite()) else {
        return 0.0..1.0;
    };
    if hi > lo {
        let d = (hi - lo) * pad;
        return (lo - d)..(hi + d);
    }
    let d = if lo == 0.0 { 1.0 } else { 0.1 * lo.abs() };
    (lo - d)..(hi + d)
}

/// One axis of a chart: its range (in log10 units when `log`), its label.
pub(crate) struct AxisDesc<'s> {
    pub range: std::ops::Range<f64>,
    pub label: &'s str,
    pub log: bool,
}

impl<'s> AxisDesc<'s> {
    pub fn new(range: std::ops::Range<f64>, label: &'s str, log: bool) -> AxisDesc<'s> {
        AxisDesc { range, label, log }
    }

    pub fn linear(range: std::ops::Range<f64>, label: &'s str) -> AxisDesc<'s> {
        AxisDesc {
            range,
            label,
            log: false,
        }
    }

    pub fn log(range: std::ops::Range<f64>, label: &'s str) -> AxisDesc<'s> {
        AxisDesc {
            range,
            label,
            log: true,
        }
    }

    fn sane(&self) -> std::ops::Range<f64> {
        let (a, b) = (self.range.start, self.range.end);
        if a.is_finite() && b.is_finite() && b > a {
            a..b
        } else {
            padded(extent([a, b].into_iter()), 0.0)
        }
    }
}

/// Tick positions (log10s) on a log axis from `lo` to `hi` (log10s):
/// decades (every few when there are many), then 1-2-5 or 1…9 within
/// decades as the span narrows, and evenly spaced values when even those
/// give fewer than two.
pub(crate) fn log_ticks(lo: f64, hi: f64) -> Vec<f64> {
    if !(lo.is_finite() && hi.is_finite() && hi > lo) {
        return Vec::new();
    }
    let span = hi - lo;
    let (every, multiples): (i64, &[f64]) = if span > 7.0 {
        ((span / 6.0).ceil() as i64, &[1.0])
    } else if span >= 3.0 {
        (1, &[1.0])
    } else if span >= 0.6 {
        (1, &[1.0, 2.0, 5.0])
    } else {
        (1, &[1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0, 9.0])
    };
    // Doubles span at most about 650 decades; more is not a real axis.
    if hi.ceil() - lo.floor() > 700.0 {
        return Vec::new();
    }
    let mut ticks = Vec::new();
    let (first, last) = (lo.floor() as i64, hi.ceil() as i64);
    for decade in first..=last {
        if decade.rem_euclid(every) != 0 {
            continue;
        }
        for m in multiples {
            let v = decade as f64 + m.log10();
            if v >= lo - 1e-9 && v <= hi + 1e-9 {
                ticks.push(v);
            }
        }
    }
    if ticks.len() < 2 {
        ticks = (0..5)
            .map(|k| 10f64.powf(lo + span * (0.1 + 0.2 * k as f64)))
            .map(|v| round_to(v, 3).log10())
            .collect();
        ticks.dedup();
    }
    ticks
}

/// A value to three significant digits, for labels and notes.
pub(crate) fn short(v: f64) -> String {
    tick(round_to(v, 3))
}

/// `v` rounded to `digits` significant digits.
fn round_to(v: f64, digits: i32) -> f64 {
    if v == 0.0 || !v.is_finite() {
        return v;
    }
    let magnitude = v.abs().log10().floor() as i32;
    let factor = 10f64.powi(digits - 1 - magnitude);
    (v * factor).round() / factor
}

/// A chart area with both axes drawn and labelled.
pub(crate) fn axes<'a, DB: DrawingBackend>(
    root: &'a DrawingArea<DB, Shift>,
    scale: f64,
    x: AxisDesc<'_>,
    y: AxisDesc<'_>,
) -> Result<Chart<'a, DB>, String> {
    axes_framed(root, scale, x, y, Frame::default())
}

/// Room around the plotting area, in CSS pixels: above it for labels
/// (bifurcation kinds), right of it for a side panel (legend and notes).
#[derive(Clone, Copy, Debug)]
pub(crate) struct Frame {
    pub top: f64,
    pub right: f64,
}

impl Default for Frame {
    fn default() -> Self {
        Frame {
            top: 10.0,
            right: 24.0,
        }
    }
}

/// [`axes`] with more room around the plotting area.
pub(crate) fn axes_framed<'a, DB: DrawingBackend>(
    root: &'a DrawingArea<DB, Shift>,
    scale: f64,
    x: AxisDesc<'_>,
    y: AxisDesc<'_>,
    frame: Frame,
) -> Result<Chart<'a, DB>, String> {
    let font = ("sans-serif", font_size(scale, 13.0));
    let (x_range, y_range) = (x.sane(), y.sane());
    let mut chart = ChartBuilder::on(root)
        .margin(px(scale, 10.0))
        .margin_top(px(scale, frame.top))
        .margin_right(px(scale, frame.right))
        .x_label_area_size(px(scale, 36.0))
        .y_label_area_size(px(scale, 60.0))
        .build_cartesian_2d(x_range.clone(), y_range.clone())
        .map_err(err)?;
    // Log axes get their own ticks at round values (below); plotters'
    // would fall at round logarithms.
    let mut mesh = chart.configure_mesh();
    mesh.x_desc(x.label)
        .y_desc(y.label)
        .label_style(font)
        .axis_desc_style(font)
        .x_label_formatter(&|v| tick(*v))
        .y_label_formatter(&|v| tick(*v))
        .light_line_style(RGBColor(235, 235, 235));
    if x.log {
        mesh.x_labels(0);
    }
    if y.log {
        mesh.y_labels(0);
    }
    mesh.draw().map_err(err)?;
    let map = plot_map(&chart, x.log, y.log);
    let grid = RGBColor(215, 215, 215).stroke_width(1);
    let ink = INK.stroke_width(1);
    let size = font_size(scale, 13.0);
    let mark = px(scale, 5.0) as i32;
    let gap = px(scale, 3.0) as i32;
    if x.log {
        for v in log_ticks(x_range.start, x_range.end) {
            let (at, _) = map.pixel_of((v, map.y.0));
            let at = at.round() as i32;
            let (top, bottom) = map.pixels_y;
            root.draw(&PathElement::new(vec![(at, top), (at, bottom)], grid))
                .map_err(err)?;
            root.draw(&PathElement::new(
                vec![(at, bottom), (at, bottom + mark)],
                ink,
            ))
            .map_err(err)?;
            let label = short(10f64.powf(v));
            text_at(
                root,
                &label,
                (at, bottom + mark + gap),
                (HPos::Center, VPos::Top),
                size,
                INK,
            )?;
        }
    }
    if y.log {
        for v in log_ticks(y_range.start, y_range.end) {
            let (_, at) = map.pixel_of((map.x.0, v));
            let at = at.round() as i32;
            let (left, right) = map.pixels_x;
            root.draw(&PathElement::new(vec![(left, at), (right, at)], grid))
                .map_err(err)?;
            root.draw(&PathElement::new(vec![(left - mark, at), (left, at)], ink))
                .map_err(err)?;
            let label = short(10f64.powf(v));
            text_at(
                root,
                &label,
                (left - mark - gap, at),
                (HPos::Right, VPos::Center),
                size,
                INK,
            )?;
        }
    }
    Ok(chart)
}

pub(crate) fn plot_map<DB: DrawingBackend>(
    chart: &Chart<'_, DB>,
    log_x: bool,
    log_y: bool,
) -> PlotMap {
    let area = chart.plotting_area();
    let (px_x, px_y) = area.get_pixel_range();
    let x = area.get_x_range();
    let y = area.get_y_range();
    PlotMap {
        pixels_x: (px_x.start, px_x.end),
        pixels_y: (px_y.start, px_y.end),
        x: (x.start, x.end),
        y: (y.start, y.end),
        log_x,
        log_y,
    }
}

/// The legend box, drawn by plotters from the series' labels.
pub(crate) fn legend<'a, DB: DrawingBackend + 'a>(
    chart: &mut Chart<'a, DB>,
    scale: f64,
    position: SeriesLabelPosition,
) -> Result<(), String> {
    chart
        .configure_series_labels()
        .label_font(("sans-serif", font_size(scale, 12.0)))
        .background_style(WHITE.mix(0.85))
        .border_style(RGBColor(180, 180, 180))
        .position(position)
        .draw()
        .map_err(err)
}

/// A legend in the side panel right of the plotting area (see [`Frame`]),
/// from its top: a sample and a label per entry. Returns the height used.
pub(crate) fn side_legend<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    map: &PlotMap,
    entries: &[(String, LegendSample)],
    scale: f64,
) -> Result<i32, String> {
    let size = font_size(scale, 12.0);
    let row = (size * 1.5).round() as i32;
    let x = map.pixels_x.1 + px(scale, 12.0) as i32;
    let text_x = x + px(scale, 30.0) as i32;
    for (k, (label, sample)) in entries.iter().enumerate() {
        let y = map.pixels_y.0 + row / 2 + k as i32 * row;
        root.draw(&Glyph {
            at: (x, y),
            sample: *sample,
        })
        .map_err(err)?;
        text_at(
            root,
            label,
            (text_x, y),
            (HPos::Left, VPos::Center),
            size,
            INK,
        )?;
    }
    Ok(row * entries.len() as i32)
}

/// Lines of text in the side panel, from `top` pixels below the top of
/// the plotting area.
pub(crate) fn side_notes<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    map: &PlotMap,
    top: i32,
    lines: &[String],
    scale: f64,
) -> Result<(), String> {
    let size = font_size(scale, 11.0);
    let x = map.pixels_x.1 + px(scale, 12.0) as i32;
    for (k, line) in lines.iter().enumerate() {
        let y = map.pixels_y.0 + top + (k as f64 * size * 1.4) as i32;
        text_at(root, line, (x, y), (HPos::Left, VPos::Top), size, INK)?;
    }
    Ok(())
}

/// Split a polyline where a point is not finite: the pieces to draw.
pub(crate) fn finite_pieces(points: impl IntoIterator<Item = (f64, f64)>) -> Vec<Vec<(f64, f64)>> {
    let mut pieces = vec![Vec::new()];
    for p in points {
        if p.0.is_finite() && p.1.is_finite() {
            if let Some(last) = pieces.last_mut() {
                last.push(p);
            }
        } else if pieces.last().is_some_and(|l| !l.is_empty()) {
            pieces.push(Vec::new());
        }
    }
    pieces.retain(|p| !p.is_empty());
    pieces
}

/// Dash and gap lengths of a pattern, in CSS pixels.
fn dash_lengths(dash: Dash) -> Option<(f64, f64)> {
    match dash {
        Dash::Solid => None,
        Dash::Dashed => Some((6.0, 4.0)),
        Dash::Dotted => Some((2.0, 3.0)),
        Dash::Long => Some((12.0, 4.0)),
    }
}

/// A polyline in data coordinates with a pattern, broken where a point is
/// not finite.
pub(crate) fn draw_line<'a, DB: DrawingBackend + 'a>(
    chart: &mut Chart<'a, DB>,
    points: impl IntoIterator<Item = (f64, f64)>,
    style: ShapeStyle,
    dash: Dash,
    scale: f64,
) -> Result<(), String> {
    for piece in finite_pieces(points) {
        match dash_lengths(dash) {
            None => {
                chart
                    .draw_series(LineSeries::new(piece, style))
                    .map_err(err)?;
            }
            Some((on, off)) => {
                chart
                    .draw_series(DashedLineSeries::new(
                        piece,
                        px(scale, on),
                        px(scale, off),
                        style,
                    ))
                    .map_err(err)?;
            }
        }
    }
    Ok(())
}

/// A legend entry with no series of its own (the lines were drawn in
/// pieces): a sample of the line and marker.
pub(crate) fn legend_entry<'a, DB: DrawingBackend + 'a>(
    chart: &mut Chart<'a, DB>,
    label: impl Into<String>,
    sample: LegendSample,
) -> Result<(), String> {
    chart
        .draw_series(std::iter::empty::<Circle<(f64, f64), u32>>())
        .map_err(err)?
        .label(label)
        .legend(move |at| Glyph { at, sample });
    Ok(())
}

/// What a legend entry shows.
#[derive(Clone, Copy, Debug)]
pub(crate) struct LegendSample {
    pub colour: RGBAColor,
    pub width: u32,
    /// The line's pattern, or no line.
    pub dash: Option<Dash>,
    pub marker: Option<(Marker, bool)>,
    /// A filled box instead (a shaded band).
    pub band: bool,
    pub scale: f64,
}

impl LegendSample {
    pub fn line(colour: RGBColor, width: u32, dash: Dash, scale: f64) -> LegendSample {
        LegendSample {
            colour: colour.to_rgba(),
            width,
            dash: Some(dash),
            marker: None,
            band: false,
            scale,
        }
    }

    /// A series' line (2 CSS pixels) with its filled marker.
    pub fn series(look: Look, scale: f64) -> LegendSample {
        LegendSample::line(look.colour, px(scale, 2.0), look.dash, scale)
            .with_marker(look.marker, true)
    }

    pub fn with_marker(self, marker: Marker, filled: bool) -> LegendSample {
        LegendSample {
            marker: Some((marker, filled)),
            ..self
        }
    }

    pub fn marker(colour: RGBColor, marker: Marker, filled: bool, scale: f64) -> LegendSample {
        LegendSample {
            colour: colour.to_rgba(),
            width: px(scale, 1.5),
            dash: None,
            marker: Some((marker, filled)),
            band: false,
            scale,
        }
    }

    pub fn band(colour: RGBAColor, scale: f64) -> LegendSample {
        LegendSample {
            colour,
            width: 1,
            dash: None,
            marker: None,
            band: true,
            scale,
        }
    }
}

/// A legend sample drawn at a backend pixel.
struct Glyph {
    at: BackendCoord,
    sample: LegendSample,
}

impl<'a> PointCollection<'a, BackendCoord> for &'a Glyph {
    type Point = &'a BackendCoord;
    type IntoIter = std::iter::Once<&'a BackendCoord>;
    fn point_iter(self) -> Self::IntoIter {
        std::iter::once(&self.at)
    }
}

impl<DB: DrawingBackend> Drawable<DB> for Glyph {
    fn draw<I: Iterator<Item = BackendCoord>>(
        &self,
        mut pos: I,
        backend: &mut DB,
        _: (u32, u32),
    ) -> Result<(), DrawingErrorKind<DB::ErrorType>> {
        let Some((x, y)) = pos.next() else {
            return Ok(());
        };
        let s = &self.sample;
        let length = px(s.scale, 21.0) as i32;
        let style = ShapeStyle {
            color: s.colour,
            filled: false,
            stroke_width: s.width,
        };
        if s.band {
            let h = px(s.scale, 5.0) as i32;
            let fill = ShapeStyle {
                filled: true,
                ..style
            };
            backend.draw_rect((x, y - h), (x + length, y + h), &fill, true)?;
        }
        if let Some(dash) = s.dash {
            match dash_lengths(dash) {
                None => backend.draw_line((x, y), (x + length, y), &style)?,
                Some((on, off)) => {
                    let (on, off) = (px(s.scale, on) as i32, px(s.scale, off) as i32);
                    let mut start = x;
                    while start < x + length {
                        let end = (start + on).min(x + length);
                        backend.draw_line((start, y), (end, y), &style)?;
                        start = end + off;
                    }
                }
            }
        }
        if let Some((marker, filled)) = s.marker {
            let colour = RGBColor(s.colour.0, s.colour.1, s.colour.2);
            let mark = Mark {
                at: (x + length / 2, y),
                marker,
                colour,
                filled,
                radius: 4.5 * usable_scale(s.scale),
                width: px(s.scale, 1.5),
            };
            mark.paint((x + length / 2, y), backend)?;
        }
        Ok(())
    }
}

/// A marker at a point (data coordinates on a chart, or a backend pixel),
/// `radius` in backend pixels. Open markers are filled white, so lines
/// under them do not show through.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Mark<C> {
    pub at: C,
    pub marker: Marker,
    pub colour: RGBColor,
    pub filled: bool,
    pub radius: f64,
    pub width: u32,
}

impl<C> Mark<C> {
    pub fn new(at: C, marker: Marker, colour: RGBColor, filled: bool, scale: f64) -> Mark<C> {
        Mark {
            at,
            marker,
            colour,
            filled,
            radius: 4.0 * usable_scale(scale),
            width: px(scale, 1.5),
        }
    }

    fn paint<DB: DrawingBackend>(
        &self,
        (x, y): BackendCoord,
        backend: &mut DB,
    ) -> Result<(), DrawingErrorKind<DB::ErrorType>> {
        let r = self.radius.clamp(1.0, 200.0);
        let ri = r.round() as i32;
        let outline = self.colour.stroke_width(self.width);
        let fill = if self.filled {
            self.colour.filled()
        } else {
            WHITE.filled()
        };
        let at = |dx: f64, dy: f64| {
            let (dx, dy) = ((dx * r).round() as i32, (dy * r).round() as i32);
            (x.saturating_add(dx), y.saturating_add(dy))
        };
        match self.marker {
            Marker::Circle => {
                backend.draw_circle((x, y), ri as u32, &fill, true)?;
                if !self.filled {
                    backend.draw_circle((x, y), ri as u32, &outline, false)?;
                }
            }
            Marker::Square => {
                let (a, b) = (at(-0.85, -0.85), at(0.85, 0.85));
                backend.draw_rect(a, b, &fill, true)?;
                if !self.filled {
                    backend.draw_rect(a, b, &outline, false)?;
                }
            }
            Marker::Triangle | Marker::Diamond => {
                let corners = if self.marker == Marker::Triangle {
                    vec![at(0.0, -1.15), at(1.0, 0.6), at(-1.0, 0.6)]
                } else {
                    vec![at(0.0, -1.2), at(1.0, 0.0), at(0.0, 1.2), at(-1.0, 0.0)]
                };
                backend.fill_polygon(corners.iter().copied(), &fill)?;
                if !self.filled {
                    let mut closed = corners.clone();
                    closed.push(corners[0]);
                    backend.draw_path(closed, &outline)?;
                }
            }
            Marker::Cross => {
                let thick = self.colour.stroke_width(self.width + 1);
                backend.draw_line(at(-0.9, -0.9), at(0.9, 0.9), &thick)?;
                backend.draw_line(at(-0.9, 0.9), at(0.9, -0.9), &thick)?;
            }
        }
        Ok(())
    }
}

impl<'a, C> PointCollection<'a, C> for &'a Mark<C> {
    type Point = &'a C;
    type IntoIter = std::iter::Once<&'a C>;
    fn point_iter(self) -> Self::IntoIter {
        std::iter::once(&self.at)
    }
}

impl<C, DB: DrawingBackend> Drawable<DB> for Mark<C> {
    fn draw<I: Iterator<Item = BackendCoord>>(
        &self,
        mut pos: I,
        backend: &mut DB,
        _: (u32, u32),
    ) -> Result<(), DrawingErrorKind<DB::ErrorType>> {
        match pos.next() {
            Some(at) => self.paint(at, backend),
            None => Ok(()),
        }
    }
}

/// Markers at the points of the plotting area (others are left out: the
/// backend does not clip).
pub(crate) fn draw_marks<'a, DB: DrawingBackend + 'a>(
    chart: &mut Chart<'a, DB>,
    map: &PlotMap,
    points: impl IntoIterator<Item = (f64, f64)>,
    look: (Marker, RGBColor, bool),
    scale: f64,
) -> Result<(), String> {
    let (marker, colour, filled) = look;
    let marks: Vec<Mark<(f64, f64)>> = points
        .into_iter()
        .filter(|&p| map.holds(p))
        .map(|p| Mark::new(p, marker, colour, filled, scale))
        .collect();
    chart.draw_series(marks).map_err(err)?;
    Ok(())
}

/// Text at a backend pixel, anchored as given.
pub(crate) fn text_at<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    text: &str,
    at: (i32, i32),
    (h, v): (HPos, VPos),
    size: f64,
    colour: RGBColor,
) -> Result<(), String> {
    let style = ("sans-serif", size)
        .into_font()
        .color(&colour)
        .pos(Pos::new(h, v));
    root.draw(&Text::new(text.to_string(), at, style))
        .map_err(err)
}

/// A label beside a point of the plotting area (backend pixels), on a
/// translucent white box so it reads over colour, moved left or down as
/// needed to stay inside the plotting area.
pub(crate) fn label_in_plot<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    map: &PlotMap,
    text: &str,
    (x, y): (i32, i32),
    scale: f64,
    colour: RGBColor,
) -> Result<(), String> {
    let size = font_size(scale, 11.0);
    let font = ("sans-serif", size).into_text_style(root);
    let (w, h) = root.estimate_text_size(text, &font).map_err(err)?;
    let (w, h) = (w as i32, h as i32);
    let pad = px(scale, 2.0) as i32;
    let right = map.pixels_x.1 - pad;
    let x = x.min(right - w).max(map.pixels_x.0 + pad);
    let y = y.max(map.pixels_y.0 + h + pad).min(map.pixels_y.1 - pad);
    root.draw(&Rectangle::new(
        [(x - pad, y - h - pad), (x + w + pad, y + pad)],
        WHITE.mix(0.75).filled(),
    ))
    .map_err(err)?;
    text_at(root, text, (x, y), (HPos::Left, VPos::Bottom), size, colour)
}

/// A line of text in the upper left of the plotting area, `line` lines
/// down: notes such as "nothing to draw".
pub(crate) fn note<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    map: &PlotMap,
    line: usize,
    text: &str,
    scale: f64,
) -> Result<(), String> {
    let size = font_size(scale, 12.0);
    let x = map.pixels_x.0 + px(scale, 8.0) as i32;
    let y = map.pixels_y.0 + px(scale, 8.0) as i32 + (line as f64 * size * 1.35) as i32;
    text_at(root, text, (x, y), (HPos::Left, VPos::Top), size, INK)
}

/// How a time reads in a legend: "day 7" when the unit is a plural such
/// as "days", else "t = 7 h".
pub(crate) fn time_point(unit: &str, t: f64) -> String {
    let unit = unit.trim();
    match unit.strip_suffix('s') {
        Some(one) if one.len() >= 2 && one.chars().all(char::is_alphabetic) => {
            format!("{one} {}", tick(t))
        }
        _ if unit.is_empty() => format!("t = {}", tick(t)),
        _ => format!("t = {} {unit}", tick(t)),
    }
}

/// "1 release", "3 releases".
pub(crate) fn releases(count: u32) -> String {
    if count == 1 {
        "1 release".to_string()
    } else {
        format!("{count} releases")
    }
}

/// A tick label without trailing zeros: `20`, `2.5`, `1e6`.
pub fn tick(v: f64) -> String {
    if v != 0.0 && (v.abs() >= 1e6 || v.abs() < 1e-3) {
        return format!("{v:.1e}");
    }
    let s = format!("{v:.3}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" {
        "0".to_string()
    } else {
        s.to_string()
    }
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
    use super::{log_ticks, tick, time_point, PlotMap};

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
            log_x: false,
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
        let log_x = PlotMap {
            log_x: true,
            x: (-1.0, 3.0),
            ..map
        };
        let (x, _) = log_x.to_data(300.0, 110.0).unwrap();
        assert!((x - 10.0).abs() < 1e-9, "half way from 0.1 to 1000 is 10");
    }

    #[test]
    fn log_ticks_fall_on_round_values() {
        // Decades, then the 1-2-5 sequence, then 1 to 9 within a decade, as
        // log axes are commonly labelled (common practice).
        let values = |lo: f64, hi: f64| -> Vec<String> {
            log_ticks(lo, hi)
                .into_iter()
                .map(|v| tick(10f64.powf(v)))
                .collect()
        };
        assert_eq!(values(-0.2, 3.1), ["1", "10", "100", "1000"]);
        assert_eq!(values(0.25, 1.5), ["2", "5", "10", "20"]);
        assert_eq!(
            values(0.18, 2.6),
            ["2", "5", "10", "20", "50", "100", "200"]
        );
        assert_eq!(values(0.25, 0.7), ["2", "3", "4", "5"]);
        // Many decades: every fourth of 24, seven labels.
        assert_eq!(
            values(-12.0, 12.0),
            ["1.0e-12", "1.0e-8", "1.0e-4", "1", "10000", "1.0e8", "1.0e12"]
        );
        assert_eq!(values(0.41, 0.44).len(), 5, "evenly spaced inside one step");
        for (lo, hi) in [
            (f64::NAN, 1.0),
            (2.0, 1.0),
            (0.0, f64::INFINITY),
            (-1e300, 1e300),
        ] {
            assert!(log_ticks(lo, hi).is_empty(), "({lo}, {hi})");
        }
    }

    #[test]
    fn times_read_plainly() {
        assert_eq!(time_point("days", 7.0), "day 7");
        assert_eq!(time_point("years", 2.5), "year 2.5");
        assert_eq!(time_point("h", 3.0), "t = 3 h");
        assert_eq!(time_point("", 3.0), "t = 3");
    }
}
