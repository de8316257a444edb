//! A figure drawn once into a recording, then played back onto any
//! backend. The page draws every figure through [`Recording`]: the drawing
//! code is then compiled once (for the recorder) instead of once per
//! backend (canvas, SVG), which keeps the page's download small. Playback
//! makes the same backend calls, with the same arguments, as drawing
//! straight onto the backend would.

use std::cell::RefCell;
use std::convert::Infallible;
use std::rc::Rc;

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::Pos;
use plotters::style::{FontDesc, FontStyle, FontTransform, RGBAColor};
use plotters_backend::{
    BackendColor, BackendCoord, BackendStyle, BackendTextStyle, DrawingErrorKind,
};

/// Colour and width of a stroke or fill.
#[derive(Clone, Copy)]
struct Stroke {
    color: BackendColor,
    width: u32,
}

impl BackendStyle for Stroke {
    fn color(&self) -> BackendColor {
        self.color
    }
    fn stroke_width(&self) -> u32 {
        self.width
    }
}

impl Stroke {
    fn of<S: BackendStyle>(style: &S) -> Stroke {
        Stroke {
            color: style.color(),
            width: style.stroke_width(),
        }
    }
}

/// What a text was drawn with.
struct Font {
    family: String,
    size: f64,
    style: FontStyle,
    transform: FontTransform,
    anchor: Pos,
    color: BackendColor,
}

/// One recorded backend call.
enum Item {
    Pixel(BackendCoord, BackendColor),
    Line(BackendCoord, BackendCoord, Stroke),
    Rect(BackendCoord, BackendCoord, Stroke, bool),
    Path(Vec<BackendCoord>, Stroke),
    Circle(BackendCoord, u32, Stroke, bool),
    Polygon(Vec<BackendCoord>, Stroke),
    Text(String, Font, BackendCoord),
    Bitmap(BackendCoord, (u32, u32), Vec<u8>),
}

/// The backend figures are drawn on when recorded (see
/// [`Recording::make`]): it keeps the calls made on it.
pub struct RecordingBackend {
    size: (u32, u32),
    items: Rc<RefCell<Vec<Item>>>,
}

impl RecordingBackend {
    fn push(&self, item: Item) -> Result<(), DrawingErrorKind<Infallible>> {
        self.items.borrow_mut().push(item);
        Ok(())
    }
}

impl DrawingBackend for RecordingBackend {
    type ErrorType = Infallible;

    fn get_size(&self) -> (u32, u32) {
        self.size
    }
    fn ensure_prepared(&mut self) -> Result<(), DrawingErrorKind<Infallible>> {
        Ok(())
    }
    fn present(&mut self) -> Result<(), DrawingErrorKind<Infallible>> {
        Ok(())
    }
    fn draw_pixel(
        &mut self,
        point: BackendCoord,
        color: BackendColor,
    ) -> Result<(), DrawingErrorKind<Infallible>> {
        self.push(Item::Pixel(point, color))
    }
    fn draw_line<S: BackendStyle>(
        &mut self,
        from: BackendCoord,
        to: BackendCoord,
        style: &S,
    ) -> Result<(), DrawingErrorKind<Infallible>> {
        self.push(Item::Line(from, to, Stroke::of(style)))
    }
    fn draw_rect<S: BackendStyle>(
        &mut self,
        upper_left: BackendCoord,
        bottom_right: BackendCoord,
        style: &S,
        fill: bool,
    ) -> Result<(), DrawingErrorKind<Infallible>> {
        self.push(Item::Rect(
            upper_left,
            bottom_right,
            Stroke::of(style),
            fill,
        ))
    }
    fn draw_path<S: BackendStyle, I: IntoIterator<Item = BackendCoord>>(
        &mut self,
        path: I,
        style: &S,
    ) -> Result<(), DrawingErrorKind<Infallible>> {
        self.push(Item::Path(path.into_iter().collect(), Stroke::of(style)))
    }
    fn draw_circle<S: BackendStyle>(
        &mut self,
        center: BackendCoord,
        radius: u32,
        style: &S,
        fill: bool,
    ) -> Result<(), DrawingErrorKind<Infallible>> {
        self.push(Item::Circle(center, radius, Stroke::of(style), fill))
    }
    fn fill_polygon<S: BackendStyle, I: IntoIterator<Item = BackendCoord>>(
        &mut self,
        vert: I,
        style: &S,
    ) -> Result<(), DrawingErrorKind<Infallible>> {
        self.push(Item::Polygon(vert.into_iter().collect(), Stroke::of(style)))
    }
    fn draw_text<T: BackendTextStyle>(
        &mut self,
        text: &str,
        style: &T,
        pos: BackendCoord,
    ) -> Result<(), DrawingErrorKind<Infallible>> {
        let font = Font {
            family: style.family().as_str().to_string(),
            size: style.size(),
            style: style.style(),
            transform: style.transform(),
            anchor: style.anchor(),
            color: style.color(),
        };
        self.push(Item::Text(text.to_string(), font, pos))
    }
    fn blit_bitmap(
        &mut self,
        pos: BackendCoord,
        size: (u32, u32),
        src: &[u8],
    ) -> Result<(), DrawingErrorKind<Infallible>> {
        self.push(Item::Bitmap(pos, size, src.to_vec()))
    }
}

/// A figure's drawing calls, ready to play back.
pub struct Recording {
    items: Vec<Item>,
}

impl Recording {
    /// Record what `draw` does on a `width` × `height` area; also returns
    /// what `draw` returned.
    pub fn make<T>(
        width: u32,
        height: u32,
        draw: impl FnOnce(&DrawingArea<RecordingBackend, Shift>) -> Result<T, String>,
    ) -> Result<(Recording, T), String> {
        let items = Rc::new(RefCell::new(Vec::new()));
        let value = {
            let root = RecordingBackend {
                size: (width.max(1), height.max(1)),
                items: items.clone(),
            }
            .into_drawing_area();
            draw(&root)?
        };
        let items = items.take();
        Ok((Recording { items }, value))
    }

    /// Make the recorded calls on `backend`, then present it.
    pub fn play<DB: DrawingBackend>(&self, backend: &mut DB) -> Result<(), String> {
        let fail = |e: DrawingErrorKind<DB::ErrorType>| e.to_string();
        backend.ensure_prepared().map_err(fail)?;
        for item in &self.items {
            match item {
                Item::Pixel(p, c) => backend.draw_pixel(*p, *c),
                Item::Line(a, b, s) => backend.draw_line(*a, *b, s),
                Item::Rect(a, b, s, fill) => backend.draw_rect(*a, *b, s, *fill),
                Item::Path(points, s) => backend.draw_path(points.iter().copied(), s),
                Item::Circle(c, r, s, fill) => backend.draw_circle(*c, *r, s, *fill),
                Item::Polygon(points, s) => backend.fill_polygon(points.iter().copied(), s),
                Item::Text(text, f, pos) => {
                    let font = FontDesc::new(f.family.as_str().into(), f.size, f.style)
                        .transform(f.transform.clone());
                    let (r, g, b) = f.color.rgb;
                    let color = RGBAColor(r, g, b, f.color.alpha);
                    let style = TextStyle::from(font).color(&color).pos(f.anchor);
                    backend.draw_text(text, &style, *pos)
                }
                Item::Bitmap(pos, size, src) => backend.blit_bitmap(*pos, *size, src),
            }
            .map_err(fail)?;
        }
        backend.present().map_err(fail)
    }

    /// The recording as an SVG document of the size it was recorded at.
    pub fn to_svg(&self, width: u32, height: u32) -> Result<String, String> {
        let mut svg = String::new();
        {
            let mut backend = SVGBackend::with_string(&mut svg, (width.max(1), height.max(1)));
            self.play(&mut backend)?;
        }
        Ok(svg)
    }
}

#[cfg(test)]
mod tests {
    use tussock_core::run::Run;

    use super::Recording;
    use crate::testing::{problem, GREENHOUSE_MITES, RESERVE};
    use crate::to_svg;
    use crate::workbench::{draw_phase_plane, draw_time_series};

    #[test]
    fn playing_a_recording_draws_what_drawing_directly_draws() {
        for json in [GREENHOUSE_MITES, RESERVE] {
            let run = Run::compute(problem(json), &[]);
            for log_y in [false, true] {
                let mut direct_map = None;
                let direct = to_svg(900, 520, |root| {
                    let map = draw_time_series(root, &run, None, 1.0, log_y)?;
                    direct_map = Some(map);
                    Ok(map)
                })
                .unwrap();
                let (recording, map) = Recording::make(900, 520, |root| {
                    draw_time_series(root, &run, None, 1.0, log_y)
                })
                .unwrap();
                assert_eq!(recording.to_svg(900, 520).unwrap(), direct);
                assert_eq!(format!("{map:?}"), format!("{:?}", direct_map.unwrap()));
            }
            let direct = to_svg(640, 480, |root| draw_phase_plane(root, &run, None, 2.0)).unwrap();
            let (recording, _) =
                Recording::make(640, 480, |root| draw_phase_plane(root, &run, None, 2.0)).unwrap();
            assert_eq!(recording.to_svg(640, 480).unwrap(), direct);
            assert!(direct.contains("<text") && direct.contains("<polyline"));
        }
    }
}
