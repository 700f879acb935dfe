//! The charts' canvas backend with remembered text sizes: plotters measures text in the page
//! by appending a `<span>` to the body and reading its size (`plotters::style::font::web`),
//! which forces a layout of the whole page per label; the taxonomy view measures one label per
//! node on every redraw, tens of milliseconds per interaction. [`Measured`] wraps plotters'
//! `CanvasBackend`, asks plotters once per (text, font, size, rotation) and reuses the answer,
//! so the sizes, and so the drawings, are the same as before.

use std::cell::RefCell;
use std::collections::HashMap;

use plotters_backend::{
    BackendColor, BackendCoord, BackendStyle, BackendTextStyle, DrawingBackend, DrawingErrorKind,
    FontTransform,
};
use plotters_canvas::CanvasBackend;
use web_sys::HtmlCanvasElement;

/// Sizes kept at most (labels × font sizes seen); past it the cache starts over, so a long
/// session resizing the window or loading taxonomies stays bounded.
const MAX_SIZES: usize = 20_000;

type Key = (String, String, String, u64, u8);

thread_local! {
    static SIZES: RefCell<HashMap<Key, (u32, u32)>> = RefCell::new(HashMap::new());
}

/// A canvas backend whose `estimate_text_size` is remembered across draws.
pub struct Measured(CanvasBackend);

impl Measured {
    pub fn new(canvas: HtmlCanvasElement) -> Option<Self> {
        CanvasBackend::with_canvas_object(canvas).map(Measured)
    }
}

fn rotation(t: FontTransform) -> u8 {
    match t {
        FontTransform::None => 0,
        FontTransform::Rotate90 => 1,
        FontTransform::Rotate180 => 2,
        FontTransform::Rotate270 => 3,
    }
}

impl DrawingBackend for Measured {
    type ErrorType = <CanvasBackend as DrawingBackend>::ErrorType;

    fn get_size(&self) -> (u32, u32) {
        self.0.get_size()
    }

    fn ensure_prepared(&mut self) -> Result<(), DrawingErrorKind<Self::ErrorType>> {
        self.0.ensure_prepared()
    }

    fn present(&mut self) -> Result<(), DrawingErrorKind<Self::ErrorType>> {
        self.0.present()
    }

    fn draw_pixel(
        &mut self,
        point: BackendCoord,
        color: BackendColor,
    ) -> Result<(), DrawingErrorKind<Self::ErrorType>> {
        self.0.draw_pixel(point, color)
    }

    fn draw_line<S: BackendStyle>(
        &mut self,
        from: BackendCoord,
        to: BackendCoord,
        style: &S,
    ) -> Result<(), DrawingErrorKind<Self::ErrorType>> {
        self.0.draw_line(from, to, style)
    }

    fn draw_rect<S: BackendStyle>(
        &mut self,
        upper_left: BackendCoord,
        bottom_right: BackendCoord,
        style: &S,
        fill: bool,
    ) -> Result<(), DrawingErrorKind<Self::ErrorType>> {
        self.0.draw_rect(upper_left, bottom_right, style, fill)
    }

    fn draw_path<S: BackendStyle, I: IntoIterator<Item = BackendCoord>>(
        &mut self,
        path: I,
        style: &S,
    ) -> Result<(), DrawingErrorKind<Self::ErrorType>> {
        self.0.draw_path(path, style)
    }

    fn draw_circle<S: BackendStyle>(
        &mut self,
        center: BackendCoord,
        radius: u32,
        style: &S,
        fill: bool,
    ) -> Result<(), DrawingErrorKind<Self::ErrorType>> {
        self.0.draw_circle(center, radius, style, fill)
    }

    fn fill_polygon<S: BackendStyle, I: IntoIterator<Item = BackendCoord>>(
        &mut self,
        vert: I,
        style: &S,
    ) -> Result<(), DrawingErrorKind<Self::ErrorType>> {
        self.0.fill_polygon(vert, style)
    }

    fn draw_text<TStyle: BackendTextStyle>(
        &mut self,
        text: &str,
        style: &TStyle,
        pos: BackendCoord,
    ) -> Result<(), DrawingErrorKind<Self::ErrorType>> {
        self.0.draw_text(text, style, pos)
    }

    fn estimate_text_size<TStyle: BackendTextStyle>(
        &self,
        text: &str,
        style: &TStyle,
    ) -> Result<(u32, u32), DrawingErrorKind<Self::ErrorType>> {
        let key: Key = (
            text.to_string(),
            style.family().as_str().to_string(),
            style.style().as_str().to_string(),
            style.size().to_bits(),
            rotation(style.transform()),
        );
        if let Some(size) = SIZES.with(|s| s.borrow().get(&key).copied()) {
            return Ok(size);
        }
        let size = self.0.estimate_text_size(text, style)?;
        SIZES.with(|s| {
            let mut s = s.borrow_mut();
            if s.len() >= MAX_SIZES {
                s.clear();
            }
            s.insert(key, size);
        });
        Ok(size)
    }

    fn blit_bitmap(
        &mut self,
        pos: BackendCoord,
        size: (u32, u32),
        src: &[u8],
    ) -> Result<(), DrawingErrorKind<Self::ErrorType>> {
        self.0.blit_bitmap(pos, size, src)
    }
}
