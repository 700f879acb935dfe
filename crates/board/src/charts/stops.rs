//! Chart 2: the share of predictions whose descent stops at each depth, stacked by outcome
//! (correct, unverifiable, wrong — bottom to top), with the total share over each bar.

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

use super::common::{measure, px, text, text_at, Legend, Sizes, Swatch};
use super::{StopView, AXIS, BACKGROUND, CORRECT, GRID, GRID_LIGHT, INK_SOFT, UNVERIFIABLE, WRONG};

/// The x axis description.
pub const X_DESC: &str = "depth where descent stops";
/// The y axis description.
pub const Y_DESC: &str = "share of predictions";
/// Legend texts, bottom to top of each stack.
pub const OUTCOME_LABELS: [&str; 3] = ["correct", "unverifiable", "wrong"];
/// What the chart says when there is nothing to draw.
pub const EMPTY_MESSAGE: &str = "no predictions";

/// Half the width of a bar, in depth units (at most; see `half_bar`).
const HALF_BAR: f64 = 0.34;

/// A share usable as a bar height: finite and positive, else 0.
fn share(v: f64) -> f64 {
    if v.is_finite() && v > 0.0 {
        v.min(1.0)
    } else {
        0.0
    }
}

/// A share as a percentage with at most two decimals and no trailing zeros ("40%", "2.5%").
pub fn percent(v: f64) -> String {
    let s = format!("{:.2}", v * 100.0);
    let s = s.trim_end_matches('0').trim_end_matches('.');
    let s = if s == "-0" { "0" } else { s };
    format!("{s}%")
}

/// Draws chart 2 over the whole `area` (filling its background first). The caller presents.
pub fn draw_stops<B: DrawingBackend>(
    area: &DrawingArea<B, Shift>,
    view: &StopView,
) -> Result<(), DrawingAreaErrorKind<B::ErrorType>> {
    let s = Sizes::of(area);
    area.fill(&BACKGROUND)?;

    let stacks: Vec<[f64; 3]> = view
        .shares
        .iter()
        .map(|&(c, u, w)| [share(c), share(u), share(w)])
        .collect();
    let top = stacks
        .iter()
        .map(|st| st.iter().sum::<f64>())
        .fold(0.0_f64, f64::max);
    let empty = top <= 0.0;
    let max_depth = stacks.len().saturating_sub(1);
    let x_max = max_depth as f64;
    // Room above the tallest bar for its total.
    let y_max = if empty { 1.0 } else { (top * 1.14).min(1.2) };

    let tick_style = text(s.small);
    let desc_style = text(s.font);
    let (tick_w, tick_h) = measure(area, "100%", &tick_style)?;
    let (_, desc_h) = measure(area, Y_DESC, &desc_style)?;

    let legend = Legend {
        entries: vec![
            (Swatch::Block(CORRECT), OUTCOME_LABELS[0].to_string()),
            (Swatch::Block(UNVERIFIABLE), OUTCOME_LABELS[1].to_string()),
            (Swatch::Block(WRONG), OUTCOME_LABELS[2].to_string()),
        ],
        size: s.small,
        sizes: s,
    };
    let legend_h = px(s.small * 2.0);

    let mut chart = ChartBuilder::on(area)
        .margin_top(legend_h)
        .margin_right(px(s.font * 1.0))
        .margin_bottom(px(s.font * 0.3))
        .margin_left(px(s.font * 0.3))
        .x_label_area_size(tick_h + desc_h + px(s.font * 1.0))
        .y_label_area_size(tick_w + desc_h + px(s.font * 1.0))
        .build_cartesian_2d(-0.5..x_max + 0.5, 0.0..y_max)?;

    let (plot_x, plot_y) = chart.plotting_area().get_pixel_range();
    let base = area.get_base_pixel();
    let plot_w = plot_x.end - plot_x.start;
    let slot_w = f64::from(plot_w) / (x_max + 1.0);

    // The root's tick says so when there is room; otherwise the axis description does.
    let root_label = "0 (root)";
    let (root_w, _) = measure(area, root_label, &tick_style)?;
    let (digits_w, _) = measure(area, &max_depth.to_string(), &tick_style)?;
    let root_fits = f64::from(root_w) < slot_w * 0.95 - f64::from(digits_w) * 0.5;
    let x_desc = if root_fits {
        X_DESC.to_string()
    } else {
        format!("{X_DESC} (0 = root)")
    };
    let most_labels = (f64::from(plot_w) / f64::from((digits_w + tick_w).max(1))).floor() as usize;
    let x_labels = (max_depth + 1).min(most_labels.max(2));
    let y_labels = if (plot_y.end - plot_y.start) > 12 * tick_h {
        6
    } else {
        3
    };

    let depth_label = |v: &f64| -> String {
        let r = v.round();
        if (v - r).abs() > 1e-6 || r < 0.0 || r > x_max {
            String::new()
        } else if r == 0.0 && root_fits {
            root_label.to_string()
        } else {
            format!("{r:.0}")
        }
    };
    let share_label = |v: &f64| -> String {
        if *v > 1.0 + 1e-9 {
            String::new()
        } else {
            percent(*v)
        }
    };
    chart
        .configure_mesh()
        .disable_x_mesh()
        .x_desc(x_desc)
        .y_desc(Y_DESC)
        .x_labels(x_labels)
        .y_labels(y_labels)
        .x_label_formatter(&depth_label)
        .y_label_formatter(&share_label)
        .label_style(tick_style.clone())
        .axis_desc_style(desc_style.clone())
        .bold_line_style(GRID.stroke_width(1))
        .light_line_style(GRID_LIGHT.stroke_width(1))
        .max_light_lines(1)
        .axis_style(AXIS.stroke_width(1))
        .draw()?;

    let plot_centre = (
        (plot_x.start + plot_x.end) / 2 - base.0,
        (plot_y.start + plot_y.end) / 2 - base.1,
    );

    if empty {
        let style = text_at(s.font * 1.15, HPos::Center, VPos::Center).color(&INK_SOFT);
        return area.draw_text(EMPTY_MESSAGE, &style, plot_centre);
    }

    // Bars fill most of their slot, but a lone bar does not become a wall.
    let half_bar = HALF_BAR.min(s.font * 2.5 / slot_w.max(1.0));
    let colours = [CORRECT, UNVERIFIABLE, WRONG];
    chart.draw_series(stacks.iter().enumerate().flat_map(|(d, stack)| {
        let x = d as f64;
        let mut y = 0.0;
        stack
            .iter()
            .zip(colours)
            .filter_map(move |(&v, colour)| {
                let y0 = y;
                y += v;
                (v > 0.0).then(|| {
                    Rectangle::new([(x - half_bar, y0), (x + half_bar, y)], colour.filled())
                })
            })
            .collect::<Vec<_>>()
    }))?;

    // Totals over the bars, when they fit the slot.
    let total_style = text_at(s.small * 0.9, HPos::Center, VPos::Bottom).color(&INK_SOFT);
    for (d, stack) in stacks.iter().enumerate() {
        let total: f64 = stack.iter().sum();
        if total <= 0.0 {
            continue;
        }
        let label = percent(total);
        let (w, _) = measure(area, &label, &total_style)?;
        if f64::from(w) > slot_w * 0.95 {
            continue;
        }
        let (x, y) = chart.backend_coord(&(d as f64, total));
        area.draw_text(
            &label,
            &total_style,
            (x - base.0, y - base.1 - px(s.small * 0.25)),
        )?;
    }

    // The legend, one row centred over the plot.
    let lw = legend.row_width(area)?;
    let left = plot_centre.0 - lw / 2;
    legend.draw_row(area, (left.max(0), legend_h / 2 + px(s.small * 0.15)))
}

#[cfg(test)]
mod tests {
    use super::percent;

    #[test]
    fn percents_read_well() {
        assert_eq!(percent(0.4), "40%");
        assert_eq!(percent(0.025), "2.5%");
        assert_eq!(percent(0.0), "0%");
        assert_eq!(percent(1.0), "100%");
        assert_eq!(percent(0.12345), "12.35%");
    }
}
