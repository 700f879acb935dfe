//! Chart 1: precision against specificity — the exact curve for one shared threshold, the path of
//! the operating point as one depth's threshold sweeps 0..1, and the current operating point.

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

use super::common::{
    densify, draw_current_marker, draw_mark, marker_big, marker_small, measure, px, text, text_at,
    unit, Legend, Rect, Sizes, Swatch,
};
use super::{
    TradePoint, TradeoffView, AXIS, BACKGROUND, CURRENT, CURVE, GRID, GRID_LIGHT, INK_SOFT, SWEEP,
    SWEEP_TEXT,
};

/// The x axis description.
pub const X_DESC: &str = "specificity (information gain)";
/// The y axis description.
pub const Y_DESC: &str = "precision";
/// Legend text of the curve.
pub const CURVE_LABEL: &str = "one shared threshold (exact)";
/// Legend text of the current point.
pub const CURRENT_LABEL: &str = "current settings";
/// What the chart says when there is nothing to draw.
pub const EMPTY_MESSAGE: &str = "no predictions";

/// Legend text of the sweep of depth `depth`.
pub fn sweep_label(depth: usize) -> String {
    format!("depth {depth} from 0 to 1")
}

/// The label next to the current point: precision @ specificity.
pub fn current_label(p: &TradePoint) -> String {
    format!("now {:.4} @ {:.4}", p.precision, p.specificity)
}

/// Margin around [0, 1] on the x axis so that markers at 0 or 1 are not cut.
const X_PAD: f64 = 0.02;

/// (specificity, precision), finite and clamped to [0, 1].
fn clean(p: &TradePoint) -> Option<TradePoint> {
    Some(TradePoint {
        threshold: p.threshold,
        specificity: unit(p.specificity)?,
        precision: unit(p.precision)?,
    })
}

/// The y range: from a round value a little below the lowest precision (never above 0.5, so
/// 0.5..1 is always visible, never below 0) up to 1, with a little room either side.
fn precision_range(precisions: impl Iterator<Item = f64>) -> (f64, f64) {
    let min = precisions.fold(1.0_f64, f64::min);
    let lo = (((min - 0.02) / 0.1).floor() * 0.1).clamp(0.0, 0.5);
    let pad = (1.0 - lo) * 0.025;
    (lo - pad, 1.0 + pad)
}

/// Where the curve's points were drawn, in the area's pixels: the page's hit test for hovering
/// and clicking the curve uses the geometry of the drawing itself.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct TradeoffFrame {
    /// The curve's points as drawn (ordered by threshold), each with its pixel position.
    pub points: Vec<((i32, i32), TradePoint)>,
    /// The area's size in pixels when it was drawn.
    pub dims: (u32, u32),
}

impl TradeoffFrame {
    /// The index of the curve point nearest to `at` (area pixels), if one lies within
    /// `reach` pixels.
    pub fn nearest(&self, at: (i32, i32), reach: f64) -> Option<usize> {
        let d2 = |(x, y): (i32, i32)| {
            let (dx, dy) = (f64::from(x - at.0), f64::from(y - at.1));
            dx * dx + dy * dy
        };
        self.points
            .iter()
            .enumerate()
            .map(|(i, (p, _))| (i, d2(*p)))
            .filter(|&(_, d)| d <= reach * reach)
            .min_by(|a, b| a.1.total_cmp(&b.1))
            .map(|(i, _)| i)
    }

    /// How far a pointer may be from a point and still take it: a few marker widths.
    pub fn reach(&self) -> f64 {
        Sizes::of_dims(self.dims.0, self.dims.1).font * 1.5
    }
}

/// The sweep's tenths labelled on the chart (the others keep their dot only, to keep it clear).
pub const LABELLED_TENTHS: [usize; 5] = [1, 3, 5, 7, 9];

/// Draws chart 1 over the whole `area` (filling its background first). The caller presents.
pub fn draw_tradeoff<B: DrawingBackend>(
    area: &DrawingArea<B, Shift>,
    view: &TradeoffView,
) -> Result<(), DrawingAreaErrorKind<B::ErrorType>> {
    draw_tradeoff_framed(area, view).map(|_| ())
}

/// [`draw_tradeoff`], returning where the curve's points went (for the page's hit test).
pub fn draw_tradeoff_framed<B: DrawingBackend>(
    area: &DrawingArea<B, Shift>,
    view: &TradeoffView,
) -> Result<TradeoffFrame, DrawingAreaErrorKind<B::ErrorType>> {
    let s = Sizes::of(area);
    let mut frame = TradeoffFrame {
        points: Vec::new(),
        dims: area.dim_in_pixel(),
    };
    area.fill(&BACKGROUND)?;

    let curve: Vec<TradePoint> = view.curve.iter().filter_map(clean).collect();
    let sweep: Option<(usize, Vec<TradePoint>)> = view
        .sweep
        .as_ref()
        .map(|(d, pts)| (*d, pts.iter().filter_map(clean).collect::<Vec<_>>()))
        .filter(|(_, pts)| !pts.is_empty());
    let current = view.current.as_ref().and_then(clean);
    let marks: Vec<(&str, TradePoint)> = view
        .marks
        .iter()
        .filter_map(|(l, p)| Some((l.as_str(), clean(p)?)))
        .collect();
    let empty = curve.is_empty() && current.is_none() && sweep.is_none() && marks.is_empty();

    let all = curve
        .iter()
        .chain(sweep.iter().flat_map(|(_, p)| p.iter()))
        .chain(current.iter())
        .chain(marks.iter().map(|(_, p)| p));
    let (y_lo, y_hi) = precision_range(all.map(|p| p.precision));

    let tick_style = text(s.small);
    let desc_style = text(s.font);
    let (tick_w, tick_h) = measure(area, "0.0", &tick_style)?;
    let (_, desc_h) = measure(area, Y_DESC, &desc_style)?;

    let mut chart = ChartBuilder::on(area)
        .margin_top(px(s.font * 0.9))
        .margin_right(px(s.font * 1.3))
        .margin_bottom(px(s.font * 0.3))
        .margin_left(px(s.font * 0.3))
        .x_label_area_size(tick_h + desc_h + px(s.font * 1.0))
        .y_label_area_size(tick_w + desc_h + px(s.font * 1.1))
        .build_cartesian_2d(-X_PAD..1.0 + X_PAD, y_lo..y_hi)?;

    let (plot_x, plot_y) = chart.plotting_area().get_pixel_range();
    let x_labels = if (plot_x.end - plot_x.start) > 10 * (tick_w * 2) {
        11
    } else {
        6
    };
    let y_labels = if (plot_y.end - plot_y.start) > 12 * tick_h {
        6
    } else {
        3
    };
    chart
        .configure_mesh()
        .x_desc(X_DESC)
        .y_desc(Y_DESC)
        .x_labels(x_labels)
        .y_labels(y_labels)
        .x_label_formatter(&|v| format!("{v:.1}"))
        .y_label_formatter(&|v| format!("{v:.1}"))
        .label_style(tick_style.clone())
        .axis_desc_style(desc_style.clone())
        .bold_line_style(GRID.stroke_width(1))
        .light_line_style(GRID_LIGHT.stroke_width(1))
        .max_light_lines(1)
        .axis_style(AXIS.stroke_width(1))
        .draw()?;

    // Area pixel coordinates (the legend and labels are drawn on `area`, not in data space).
    let base = area.get_base_pixel();
    let plot = Rect {
        x0: plot_x.start - base.0,
        y0: plot_y.start - base.1,
        x1: plot_x.end - base.0,
        y1: plot_y.end - base.1,
    };

    if empty {
        let centre = ((plot.x0 + plot.x1) / 2, (plot.y0 + plot.y1) / 2);
        let style = text_at(s.font * 1.15, HPos::Center, VPos::Center).color(&INK_SOFT);
        area.draw_text(EMPTY_MESSAGE, &style, centre)?;
        return Ok(frame);
    }

    let xy = |p: &TradePoint| (p.specificity, p.precision);
    chart.draw_series(LineSeries::new(
        curve.iter().map(xy),
        CURVE.stroke_width(s.stroke),
    ))?;
    if curve.len() == 1 {
        chart.draw_series(
            curve
                .iter()
                .map(|p| Circle::new(xy(p), marker_small(s) + 1, CURVE.filled())),
        )?;
    }
    if let Some((_, pts)) = &sweep {
        let dash = px(s.font * 0.4).max(2);
        chart.draw_series(DashedLineSeries::new(
            pts.iter().map(xy),
            dash,
            dash / 2 + 1,
            SWEEP.stroke_width(s.thin),
        ))?;
        // One marker per tenth of the dragged threshold (0, 0.1, …, 1): where the operating
        // point sits when that depth's control reads that value.
        let tenths = (0..=10).filter_map(|k| {
            let t = k as f64 / 10.0;
            let i = pts.partition_point(|p| p.threshold <= t);
            pts.get(i.saturating_sub(1))
        });
        chart.draw_series(tenths.map(|p| Circle::new(xy(p), marker_small(s), SWEEP.filled())))?;
    }
    // The labelled tenths (value, point), placed once the pixel mapping is known.
    let tenth_labels: Vec<(usize, TradePoint)> = sweep
        .as_ref()
        .map(|(_, pts)| {
            LABELLED_TENTHS
                .iter()
                .filter_map(|&k| {
                    let t = k as f64 / 10.0;
                    let i = pts.partition_point(|p| p.threshold <= t);
                    Some((k, *pts.get(i.checked_sub(1)?)?))
                })
                .collect()
        })
        .unwrap_or_default();

    let to_px = |p: &TradePoint| {
        let (x, y) = chart.backend_coord(&(p.specificity, p.precision));
        (x - base.0, y - base.1)
    };

    // Everything drawn so far, as pixels, for placing the label and the legend where they
    // cover the least.
    let curve_px: Vec<(i32, i32)> = curve.iter().map(to_px).collect();
    frame.points = curve_px
        .iter()
        .copied()
        .zip(curve.iter().copied())
        .collect();
    let mut occupied = densify(&curve_px, s.font * 0.4);
    // Each labelled tenth beside its dot, skipped when it would sit on an earlier one.
    let tenth_style = text(s.small * 0.9).color(&SWEEP_TEXT);
    let mut placed: Vec<Rect> = Vec::new();
    for (k, p) in &tenth_labels {
        let label = format!("0.{k}");
        let at = to_px(p);
        let (w, h) = measure(area, &label, &tenth_style)?;
        let off = marker_small(s) + 2;
        let r = Rect::at(at.0 + off, at.1 - h - off / 2, w, h);
        if placed.iter().any(|q| q.overlaps(&r)) || !r.within(&plot) {
            continue;
        }
        area.draw_text(&label, &tenth_style, (r.x0, (r.y0 + r.y1) / 2))?;
        occupied.extend([(r.x0, r.y0), (r.x1, r.y1), (r.x0, r.y1), (r.x1, r.y0)]);
        placed.push(r);
    }
    if let Some((_, pts)) = &sweep {
        let sweep_px: Vec<(i32, i32)> = pts.iter().map(to_px).collect();
        occupied.extend(densify(&sweep_px, s.font * 0.4));
    }

    // The marks go on before the current point's label is placed (so it avoids them) and are
    // drawn over the current marker (the suggestion's hollow triangle rings it).
    let mark_px: Vec<(i32, i32)> = marks.iter().map(|(_, p)| to_px(p)).collect();
    for &at in &mark_px {
        let r = 2 * (marker_big(s) + 1);
        occupied.extend([at, (at.0 - r, at.1 - r), (at.0 + r, at.1 + r)]);
    }

    let mut label_box = None;
    if let Some(p) = &current {
        let at = to_px(p);
        draw_current_marker(area, at, s, CURRENT)?;
        let label = current_label(p);
        let style = text(s.small);
        let (w, h) = measure(area, &label, &style)?;
        let pad = px(s.small * 0.25);
        let (bw, bh) = (w + 2 * pad, h + 2 * pad);
        let off = marker_big(s) + px(s.small * 0.3);
        // Around the marker — diagonals first, then above/below, then sideways — close by, then
        // further out (with a leader line) when the close spots cover the lines.
        let spots = |k: i32| {
            let o = off * k;
            [
                (at.0 + o, at.1 - o - bh),
                (at.0 + o, at.1 + o),
                (at.0 - o - bw, at.1 - o - bh),
                (at.0 - o - bw, at.1 + o),
                (at.0 - bw / 2, at.1 - o - bh),
                (at.0 - bw / 2, at.1 + o),
                (at.0 + o, at.1 - bh / 2),
                (at.0 - o - bw, at.1 - bh / 2),
            ]
        };
        let best = [1, 2, 4]
            .into_iter()
            .flat_map(|k| spots(k).into_iter().map(move |xy| (k, xy)))
            .enumerate()
            .map(|(i, (k, (x, y)))| (i, k, Rect::at(x, y, bw, bh)))
            .min_by_key(|(i, k, r)| (!r.within(&plot), r.crowding(&occupied), *k, *i))
            .map(|(_, k, r)| (k, r));
        if let Some((k, r)) = best {
            if k > 1 {
                let end = (at.0.clamp(r.x0, r.x1), at.1.clamp(r.y0, r.y1));
                area.draw(&PathElement::new(vec![at, end], INK_SOFT.stroke_width(1)))?;
            }
            area.draw(&Rectangle::new(
                [(r.x0, r.y0), (r.x1, r.y1)],
                BACKGROUND.mix(0.85).filled(),
            ))?;
            area.draw_text(&label, &style, (r.x0 + pad, (r.y0 + r.y1) / 2))?;
            label_box = Some(r);
        }
        let r = marker_big(s) + 1;
        occupied.extend([
            at,
            (at.0 - r, at.1 - r),
            (at.0 + r, at.1 - r),
            (at.0 - r, at.1 + r),
            (at.0 + r, at.1 + r),
        ]);
    }

    for (i, &at) in mark_px.iter().enumerate() {
        draw_mark(area, at, s, i)?;
    }

    let mut entries = Vec::new();
    if !view.rule.trim().is_empty() {
        entries.push((Swatch::Blank, format!("rule: {}", view.rule.trim())));
    }
    if !curve.is_empty() {
        entries.push((Swatch::Line(CURVE), CURVE_LABEL.to_string()));
    }
    if let Some((d, _)) = &sweep {
        entries.push((Swatch::Dashed(SWEEP), sweep_label(*d)));
    }
    if current.is_some() {
        entries.push((Swatch::Dot(CURRENT), CURRENT_LABEL.to_string()));
    }
    for (i, (label, _)) in marks.iter().enumerate() {
        entries.push((Swatch::Mark(i), (*label).to_string()));
    }
    let legend = Legend {
        entries,
        size: s.small,
        sizes: s,
    };
    let (lw, lh) = legend.column_size(area)?;
    let inset = px(s.font * 0.5);
    // Bottom-left first: the trade-off usually falls from top-left to bottom-right.
    let corners = [
        (plot.x0 + inset, plot.y1 - inset - lh),
        (plot.x1 - inset - lw, plot.y0 + inset),
        (plot.x1 - inset - lw, plot.y1 - inset - lh),
        (plot.x0 + inset, plot.y0 + inset),
    ];
    let best = corners
        .iter()
        .map(|&(x, y)| Rect::at(x, y, lw, lh))
        .enumerate()
        .min_by_key(|(i, r)| {
            let covers_label = label_box.is_some_and(|l| l.overlaps(r));
            (r.crowding(&occupied) + 1000 * usize::from(covers_label), *i)
        })
        .map(|(_, r)| r);
    if let Some(r) = best {
        legend.draw_column(area, (r.x0, r.y0))?;
    }
    Ok(frame)
}

#[cfg(test)]
mod tests {
    use super::precision_range;

    #[test]
    fn y_range_shows_at_least_half_to_one() {
        let (lo, hi) = precision_range([0.93, 0.97].into_iter());
        assert!(
            lo <= 0.5 && lo > 0.45 && (1.0..1.05).contains(&hi),
            "{lo} {hi}"
        );
        let (lo, _) = precision_range([0.31, 0.9].into_iter());
        assert!(lo < 0.3 && lo > 0.15, "{lo}");
        let (lo, _) = precision_range([0.0].into_iter());
        assert!(lo < 0.0 && lo > -0.05, "{lo}");
        let (lo, hi) = precision_range(std::iter::empty());
        assert!(lo < 0.5 && hi > 1.0);
    }
}
