//! The taxonomy view: an icicle. One band per depth from the focused node down; each node a
//! cell as wide as its share of the rows labelled under the focused node (a gap under a cell is
//! the rows labelled at that node itself, coarser than its children), filled bottom to top by
//! what happens to those rows: the prediction reached the node (or deeper), stopped above it,
//! was wrong, or the row abstained. The layout is computed here once ([`icicle_view`]); the
//! drawing and the page's pointer both place cells with [`IcicleView::cell_rect`], so a click
//! lands on the cell drawn under it.

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

use super::common::{measure, px, text_at, Legend, Sizes, Swatch};
use super::{BACKGROUND, CORRECT, INK_SOFT, WRONG};
use crate::nodes::Fate;
use hedgerow_core::Taxonomy;

/// Right but stopped above the node: a light slate blue, `#8FA3C7` (lighter than every outcome
/// colour, so it stays apart from the teal and the brick red without hue).
pub const ABOVE: RGBColor = RGBColor(0x8F, 0xA3, 0xC7);
/// Abstained: a light grey, `#C9CDD2`.
pub const ABSTAINED: RGBColor = RGBColor(0xC9, 0xCD, 0xD2);

/// The legend's texts, bottom to top of each cell.
pub const FATE_LABELS: [&str; 4] = ["reached the node", "stopped above", "wrong", "abstained"];

/// One node's cell.
#[derive(Debug, Clone, PartialEq)]
pub struct IcicleCell {
    pub node: u32,
    /// The id drawn in the cell when it fits ("(root)" for the root).
    pub label: String,
    /// Band: 0 for the focused node, then one per depth below it.
    pub row: usize,
    /// Horizontal extent as fractions of the width.
    pub x0: f64,
    pub x1: f64,
    pub fate: Fate,
}

/// The whole view.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct IcicleView {
    /// The focused node (the root at `len()`), drawn full width in band 0.
    pub focus: u32,
    pub cells: Vec<IcicleCell>,
    /// Number of bands.
    pub rows: usize,
}

/// The icicle from `focus` down (`fates` indexed by node, the root at `len()`). Nodes without
/// labelled rows get no width, so they are left out.
pub fn icicle_view(tax: &Taxonomy, fates: &[Fate], focus: u32) -> IcicleView {
    let focus = if (focus as usize) <= tax.len() {
        focus
    } else {
        tax.root()
    };
    let depth_of = |v: u32| if v == tax.root() { 0 } else { tax.depth(v) };
    let fate = |v: u32| fates.get(v as usize).copied().unwrap_or_default();
    let base = depth_of(focus);
    let mut cells = Vec::new();
    let mut stack = vec![(focus, 0.0_f64, 1.0_f64)];
    while let Some((v, x0, x1)) = stack.pop() {
        let f = fate(v);
        let id = tax.id(v);
        cells.push(IcicleCell {
            node: v,
            label: if id.is_empty() {
                "(root)".into()
            } else {
                id.into()
            },
            row: depth_of(v) - base,
            x0,
            x1,
            fate: f,
        });
        if f.labelled == 0 {
            continue;
        }
        let scale = (x1 - x0) / f.labelled as f64;
        let mut x = x0;
        // Children in file order, left to right (pushed in reverse so they pop in order).
        let mut kids = Vec::new();
        for &c in tax.children(v) {
            let n = fate(c).labelled;
            if n > 0 {
                let w = n as f64 * scale;
                kids.push((c, x, (x + w).min(x1)));
                x += w;
            }
        }
        stack.extend(kids.into_iter().rev());
    }
    cells.sort_by_key(|c| c.row);
    let rows = tax.max_depth().saturating_sub(base) + 1;
    IcicleView { focus, cells, rows }
}

/// Font and legend height for an area of `w` × `h` pixels.
fn legend_height(s: Sizes) -> i32 {
    px(s.small * 2.2)
}

impl IcicleView {
    /// The pixel rectangle (x0, y0, x1, y1) of `cell` in an area of `w` × `h` pixels.
    pub fn cell_rect(&self, cell: &IcicleCell, (w, h): (u32, u32)) -> (i32, i32, i32, i32) {
        let s = Sizes::of_dims(w, h);
        let top = legend_height(s);
        let band = (f64::from(h) - f64::from(top)).max(0.0) / self.rows.max(1) as f64;
        let y0 = top + px(band * cell.row as f64);
        let y1 = top + px(band * (cell.row + 1) as f64);
        (
            px(cell.x0 * f64::from(w)),
            y0,
            px(cell.x1 * f64::from(w)),
            y1,
        )
    }

    /// The cell under pixel `(x, y)` of an area of `w` × `h` pixels.
    pub fn cell_at(&self, dims: (u32, u32), (x, y): (i32, i32)) -> Option<&IcicleCell> {
        self.cells.iter().find(|c| {
            let (x0, y0, x1, y1) = self.cell_rect(c, dims);
            x >= x0 && x < x1.max(x0 + 1) && y >= y0 && y < y1
        })
    }
}

/// Draws the icicle over the whole `area`, legend on top. The caller presents.
pub fn draw_icicle<B: DrawingBackend>(
    area: &DrawingArea<B, Shift>,
    view: &IcicleView,
    selected: Option<u32>,
) -> Result<(), DrawingAreaErrorKind<B::ErrorType>> {
    let dims = area.dim_in_pixel();
    let s = Sizes::of(area);
    area.fill(&BACKGROUND)?;
    let legend = Legend {
        entries: [CORRECT, ABOVE, WRONG, ABSTAINED]
            .iter()
            .zip(FATE_LABELS)
            .map(|(&c, l)| (Swatch::Block(c), l.to_string()))
            .collect(),
        size: s.small,
        sizes: s,
    };
    legend.draw_row(area, (px(s.small * 0.4), legend_height(s) / 2))?;
    if view.cells.is_empty() {
        return Ok(());
    }
    let label_style = text_at(s.small, HPos::Left, VPos::Top);
    let pad = px(s.small * 0.25).max(1);
    for cell in &view.cells {
        let (x0, y0, x1, y1) = view.cell_rect(cell, dims);
        if x1 - x0 < 1 {
            continue;
        }
        let f = cell.fate;
        // A label strip on top when the band has room for it, the stacked fates below.
        let strip = px(s.small * 1.3);
        let bar_top = if y1 - y0 > strip * 2 { y0 + strip } else { y0 };
        let total = f.labelled.max(1) as f64;
        let mut y = y1;
        for (n, color) in [
            (f.reached, CORRECT),
            (f.above, ABOVE),
            (f.wrong, WRONG),
            (f.abstained, ABSTAINED),
        ] {
            let hgt = px(n as f64 / total * f64::from(y1 - bar_top));
            if hgt > 0 {
                area.draw(&Rectangle::new([(x0, y - hgt), (x1, y)], color.filled()))?;
                y -= hgt;
            }
        }
        let edge = if selected == Some(cell.node) {
            super::INK.stroke_width(s.stroke.max(2))
        } else {
            WHITE.stroke_width(1)
        };
        area.draw(&Rectangle::new([(x0, y0), (x1, y1)], edge))?;
        if bar_top > y0 {
            let (tw, _) = measure(area, &cell.label, &label_style)?;
            if tw + 2 * pad <= x1 - x0 {
                area.draw_text(
                    &cell.label,
                    &label_style.color(&INK_SOFT),
                    (x0 + pad, y0 + pad),
                )?;
            }
        }
    }
    Ok(())
}
