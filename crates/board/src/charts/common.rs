//! Shared pieces of the two charts: sizes that scale with the drawing area, text styles, input
//! clean-up, a little pixel geometry for placing labels, and a hand-drawn legend measured through
//! the backend (so the canvas measures with the browser and tests with their own backend).

use plotters::coord::Shift;
use plotters::element::DashedPathElement;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::{GRID, INK};

/// The font family every label uses.
const FAMILY: &str = "sans-serif";

/// Sizes in backend pixels, all derived from the area's pixel size so that a canvas drawn at
/// devicePixelRatio scale gets proportionally larger text and lines.
#[derive(Debug, Clone, Copy)]
pub(super) struct Sizes {
    /// Axis descriptions and messages.
    pub font: f64,
    /// Tick labels, legend text, point labels.
    pub small: f64,
    /// Main line width.
    pub stroke: u32,
    /// Secondary line width.
    pub thin: u32,
}

impl Sizes {
    pub fn of<B: DrawingBackend>(area: &DrawingArea<B, Shift>) -> Self {
        let (w, h) = area.dim_in_pixel();
        Self::of_dims(w, h)
    }

    /// The sizes for an area of `w` × `h` pixels (for geometry the page needs without a
    /// backend, such as where a click lands).
    pub fn of_dims(w: u32, h: u32) -> Self {
        let font = (f64::from(h) / 22.0).min(f64::from(w) / 34.0).max(7.0);
        let small = font * 0.86;
        Self {
            font,
            small,
            stroke: px(font / 6.0).max(1) as u32,
            thin: px(font / 9.0).max(1) as u32,
        }
    }
}

/// Rounds a length to whole pixels.
pub(super) fn px(v: f64) -> i32 {
    if v.is_finite() {
        v.round().clamp(-1.0e6, 1.0e6) as i32
    } else {
        0
    }
}

/// A text style of the given pixel size in the ink colour, anchored at its left middle.
pub(super) fn text(size: f64) -> TextStyle<'static> {
    TextStyle::from((FAMILY, size).into_font())
        .color(&INK)
        .pos(Pos::new(HPos::Left, VPos::Center))
}

/// `text` with another anchor.
pub(super) fn text_at(size: f64, h: HPos, v: VPos) -> TextStyle<'static> {
    text(size).pos(Pos::new(h, v))
}

/// Measures a text through the backend, as (width, height) in pixels.
pub(super) fn measure<B: DrawingBackend>(
    area: &DrawingArea<B, Shift>,
    label: &str,
    style: &TextStyle,
) -> Result<(i32, i32), DrawingAreaErrorKind<B::ErrorType>> {
    let (w, h) = area.estimate_text_size(label, style)?;
    Ok((
        i32::try_from(w).unwrap_or(i32::MAX / 4),
        i32::try_from(h).unwrap_or(i32::MAX / 4),
    ))
}

/// A value usable on a [0, 1] axis: finite, clamped.
pub(super) fn unit(v: f64) -> Option<f64> {
    v.is_finite().then(|| v.clamp(0.0, 1.0))
}

/// An axis-aligned pixel rectangle (x0 <= x1, y0 <= y1).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) struct Rect {
    pub x0: i32,
    pub y0: i32,
    pub x1: i32,
    pub y1: i32,
}

impl Rect {
    pub fn at(x0: i32, y0: i32, w: i32, h: i32) -> Self {
        Self {
            x0,
            y0,
            x1: x0 + w,
            y1: y0 + h,
        }
    }
    pub fn contains(&self, (x, y): (i32, i32)) -> bool {
        x >= self.x0 && x <= self.x1 && y >= self.y0 && y <= self.y1
    }
    pub fn within(&self, outer: &Rect) -> bool {
        self.x0 >= outer.x0 && self.x1 <= outer.x1 && self.y0 >= outer.y0 && self.y1 <= outer.y1
    }
    pub fn overlaps(&self, o: &Rect) -> bool {
        self.x0 < o.x1 && o.x0 < self.x1 && self.y0 < o.y1 && o.y0 < self.y1
    }
    /// How many of the points fall inside.
    pub fn crowding(&self, points: &[(i32, i32)]) -> usize {
        points.iter().filter(|p| self.contains(**p)).count()
    }
}

/// The pixels along a polyline, at most `step` apart, so that a box crossed by a long segment
/// still counts as crowded.
pub(super) fn densify(points: &[(i32, i32)], step: f64) -> Vec<(i32, i32)> {
    let step = step.max(1.0);
    let mut out = Vec::with_capacity(points.len());
    for pair in points.windows(2) {
        let (a, b) = (pair[0], pair[1]);
        let dx = f64::from(b.0 - a.0);
        let dy = f64::from(b.1 - a.1);
        let n = ((dx.hypot(dy) / step).ceil() as usize).clamp(1, 10_000);
        for i in 0..n {
            let t = i as f64 / n as f64;
            out.push((a.0 + px(dx * t), a.1 + px(dy * t)));
        }
    }
    out.extend(points.last().copied());
    out
}

/// What a legend entry shows left of its label.
#[derive(Debug, Clone, Copy)]
pub(super) enum Swatch {
    /// A solid line.
    Line(RGBColor),
    /// A dashed line with a small marker in the middle.
    Dashed(RGBColor),
    /// A big round marker.
    Dot(RGBColor),
    /// A named setting's marker ([`draw_mark`]): the first a triangle, the others crosses.
    Mark(usize),
    /// A filled square.
    Block(RGBColor),
    /// Nothing (a heading).
    Blank,
}

/// A legend: entries stacked in a column (`column`) or laid out in one row.
pub(super) struct Legend {
    pub entries: Vec<(Swatch, String)>,
    pub size: f64,
    pub sizes: Sizes,
}

impl Legend {
    fn pad(&self) -> i32 {
        px(self.size * 0.5)
    }
    fn row_height(&self) -> i32 {
        px(self.size * 1.45)
    }
    fn swatch_width(&self, swatch: Swatch) -> i32 {
        match swatch {
            Swatch::Blank => 0,
            Swatch::Block(_) => px(self.size * 0.9),
            _ => px(self.size * 2.0),
        }
    }
    /// Swatch plus the gap before the label.
    fn lead(&self, swatch: Swatch) -> i32 {
        match swatch {
            Swatch::Blank => 0,
            _ => self.swatch_width(swatch) + self.gap(),
        }
    }
    fn gap(&self) -> i32 {
        px(self.size * 0.5)
    }

    /// Width and height of the column layout, background padding included.
    pub fn column_size<B: DrawingBackend>(
        &self,
        area: &DrawingArea<B, Shift>,
    ) -> Result<(i32, i32), DrawingAreaErrorKind<B::ErrorType>> {
        let style = text(self.size);
        let mut widest = 0;
        for (swatch, label) in &self.entries {
            let (w, _) = measure(area, label, &style)?;
            widest = widest.max(self.lead(*swatch) + w);
        }
        let rows = i32::try_from(self.entries.len()).unwrap_or(0);
        Ok((
            widest + 2 * self.pad(),
            rows * self.row_height() + self.pad(),
        ))
    }

    /// Draws the column layout with its top-left corner at `at` (area pixels), on a light
    /// background.
    pub fn draw_column<B: DrawingBackend>(
        &self,
        area: &DrawingArea<B, Shift>,
        at: (i32, i32),
    ) -> Result<(), DrawingAreaErrorKind<B::ErrorType>> {
        let (w, h) = self.column_size(area)?;
        let bg = Rect::at(at.0, at.1, w, h);
        area.draw(&Rectangle::new(
            [(bg.x0, bg.y0), (bg.x1, bg.y1)],
            WHITE.mix(0.88).filled(),
        ))?;
        area.draw(&Rectangle::new(
            [(bg.x0, bg.y0), (bg.x1, bg.y1)],
            GRID.stroke_width(1),
        ))?;
        let mut y = at.1 + self.pad() / 2 + self.row_height() / 2;
        for (swatch, label) in &self.entries {
            self.draw_entry(area, (at.0 + self.pad(), y), *swatch, label)?;
            y += self.row_height();
        }
        Ok(())
    }

    /// Width of the one-row layout.
    pub fn row_width<B: DrawingBackend>(
        &self,
        area: &DrawingArea<B, Shift>,
    ) -> Result<i32, DrawingAreaErrorKind<B::ErrorType>> {
        let style = text(self.size);
        let mut total = 0;
        for (i, (swatch, label)) in self.entries.iter().enumerate() {
            let (w, _) = measure(area, label, &style)?;
            if i > 0 {
                total += px(self.size * 1.4);
            }
            total += self.lead(*swatch) + w;
        }
        Ok(total)
    }

    /// Draws the one-row layout starting at `at` = (left x, middle y), without a background.
    pub fn draw_row<B: DrawingBackend>(
        &self,
        area: &DrawingArea<B, Shift>,
        at: (i32, i32),
    ) -> Result<(), DrawingAreaErrorKind<B::ErrorType>> {
        let style = text(self.size);
        let mut x = at.0;
        for (swatch, label) in &self.entries {
            self.draw_entry(area, (x, at.1), *swatch, label)?;
            let (w, _) = measure(area, label, &style)?;
            x += self.lead(*swatch) + w + px(self.size * 1.4);
        }
        Ok(())
    }

    /// One entry whose swatch starts at `(x, y_middle)`.
    fn draw_entry<B: DrawingBackend>(
        &self,
        area: &DrawingArea<B, Shift>,
        (x, y): (i32, i32),
        swatch: Swatch,
        label: &str,
    ) -> Result<(), DrawingAreaErrorKind<B::ErrorType>> {
        let sw = self.swatch_width(swatch);
        let s = self.sizes;
        let mid = (x + sw / 2, y);
        match swatch {
            Swatch::Line(c) => {
                area.draw(&PathElement::new(
                    vec![(x, y), (x + sw, y)],
                    c.stroke_width(s.stroke),
                ))?;
            }
            Swatch::Dashed(c) => {
                let dash = px(self.size * 0.4).max(2);
                area.draw(&DashedPathElement::new(
                    vec![(x, y), (x + sw, y)],
                    dash,
                    dash / 2 + 1,
                    c.stroke_width(s.thin),
                ))?;
                area.draw(&Circle::new(mid, marker_small(s), c.filled()))?;
            }
            Swatch::Dot(c) => {
                draw_current_marker(area, mid, s, c)?;
            }
            Swatch::Mark(i) => {
                draw_mark(area, mid, s, i)?;
            }
            Swatch::Block(c) => {
                let half = sw / 2;
                area.draw(&Rectangle::new(
                    [(mid.0 - half, y - half), (mid.0 + half, y + half)],
                    c.filled(),
                ))?;
            }
            Swatch::Blank => {}
        }
        area.draw_text(label, &text(self.size), (x + self.lead(swatch), y))
    }
}

/// Radius of the sweep's small markers.
pub(super) fn marker_small(s: Sizes) -> i32 {
    px(s.font * 0.17).max(2)
}

/// Radius of the current point's marker.
pub(super) fn marker_big(s: Sizes) -> i32 {
    px(s.font * 0.42).max(4)
}

/// The current point's marker: a filled disc with a white ring and a dark outline, so that it
/// stands out over the curve.
pub(super) fn draw_current_marker<B: DrawingBackend>(
    area: &DrawingArea<B, Shift>,
    at: (i32, i32),
    s: Sizes,
    color: RGBColor,
) -> Result<(), DrawingAreaErrorKind<B::ErrorType>> {
    let r = marker_big(s);
    area.draw(&Circle::new(at, r + 1, INK.filled()))?;
    area.draw(&Circle::new(at, r, WHITE.filled()))?;
    area.draw(&Circle::new(at, (r * 3 / 4).max(2), color.filled()))
}

/// A named setting's marker: the first (the suggestion) a hollow ink triangle wide enough to
/// ring the current-settings marker when both are at one point (as right after a suggestion),
/// the others (its baselines) crosses in the shared curve's colour, so each reads apart from
/// the round current marker without colour.
pub(super) fn draw_mark<B: DrawingBackend>(
    area: &DrawingArea<B, Shift>,
    at: (i32, i32),
    s: Sizes,
    i: usize,
) -> Result<(), DrawingAreaErrorKind<B::ErrorType>> {
    let r = marker_big(s) + 1;
    if i == 0 {
        let t = (r * 2).max(6);
        let mut tri = vec![
            (at.0, at.1 - t),
            (at.0 + t * 87 / 100, at.1 + t / 2),
            (at.0 - t * 87 / 100, at.1 + t / 2),
        ];
        tri.push(tri[0]);
        area.draw(&PathElement::new(tri, INK.stroke_width(s.stroke.max(2))))
    } else {
        let w = s.stroke.max(2) + 1;
        area.draw(&PathElement::new(
            vec![(at.0 - r, at.1 - r), (at.0 + r, at.1 + r)],
            super::CURVE.stroke_width(w),
        ))?;
        area.draw(&PathElement::new(
            vec![(at.0 - r, at.1 + r), (at.0 + r, at.1 - r)],
            super::CURVE.stroke_width(w),
        ))
    }
}
