//! The page's charts as plotters drawing functions generic over the backend: the page draws
//! them on a `plotters_canvas::CanvasBackend`, native tests on an SVG backend.
//!
//! * [`draw_tradeoff`] — precision against specificity ([`TradeoffView`]);
//! * [`draw_stops`] — share of predictions stopping at each depth, stacked by outcome
//!   ([`StopView`]);
//! * [`draw_icicle`] — the taxonomy view, each node a cell sized by its labelled rows and
//!   filled by what happens to them ([`IcicleView`]).
//!
//! Both fill the whole area they are given (background included) and scale every size from
//! `area.dim_in_pixel()`, so a canvas drawn at devicePixelRatio scale gets proportionally
//! larger text. Text is measured through the backend (`DrawingArea::estimate_text_size`): the
//! canvas asks the browser; natively plotters without its `ttf`/`ab_glyph` features uses a crude
//! fixed estimate that needs no font, and the tests go further and wrap the SVG backend with
//! their own fixed per-character measure. The legends are drawn by hand (not plotters' series
//! labels, which measure through the font layer instead of the backend).
//!
//! The caller calls `present()`. [`TradeoffView::tables`] and [`StopView::tables`] give the
//! same numbers as tables, the charts' text alternative.

mod common;
pub mod icicle;
mod stops;
mod table;
mod tradeoff;

use plotters::style::RGBColor;

pub use icicle::{draw_icicle, icicle_view, IcicleCell, IcicleView};
pub use stops::draw_stops;
pub use table::{DataTable, MAX_ROWS};
pub use tradeoff::{draw_tradeoff, draw_tradeoff_framed, TradeoffFrame, LABELLED_TENTHS};

/// A chart as SVG text, `w` × `h` pixels: the same drawing function on plotters' SVG backend
/// (the page's "Download SVG"). `None` if drawing failed.
pub fn svg_of(
    (w, h): (u32, u32),
    draw: impl FnOnce(
        &plotters::drawing::DrawingArea<plotters::prelude::SVGBackend, plotters::coord::Shift>,
    ) -> Result<(), plotters::drawing::DrawingAreaErrorKind<std::io::Error>>,
) -> Option<String> {
    use plotters::prelude::*;
    let mut out = String::new();
    {
        let area = SVGBackend::with_string(&mut out, (w, h)).into_drawing_area();
        draw(&area).ok()?;
        area.present().ok()?;
    }
    Some(out)
}

/// Texts the charts draw, for callers (and tests) that look for them.
pub mod labels {
    pub use super::stops::{
        percent, EMPTY_MESSAGE, OUTCOME_LABELS, X_DESC as STOPS_X_DESC, Y_DESC as STOPS_Y_DESC,
    };
    pub use super::tradeoff::{
        current_label, sweep_label, CURRENT_LABEL, CURVE_LABEL, X_DESC as TRADEOFF_X_DESC,
        Y_DESC as TRADEOFF_Y_DESC,
    };
}

// The palette. Outcome colours differ in hue *and* lightness so they stay apart under the common
// colour-vision deficiencies; the page's CSS can use the same hex values.

/// Correct stops: deep teal-green, `#1F7A6D`.
pub const CORRECT: RGBColor = RGBColor(0x1F, 0x7A, 0x6D);
/// Unverifiable stops: ochre, `#D9A53F`.
pub const UNVERIFIABLE: RGBColor = RGBColor(0xD9, 0xA5, 0x3F);
/// Wrong stops: brick red, `#B0412E`.
pub const WRONG: RGBColor = RGBColor(0xB0, 0x41, 0x2E);
/// The shared-threshold curve: dark slate blue, `#34426E`.
pub const CURVE: RGBColor = RGBColor(0x34, 0x42, 0x6E);
/// One depth's sweep: orange, `#E8822A`.
pub const SWEEP: RGBColor = RGBColor(0xE8, 0x82, 0x2A);
/// The sweep's tenth labels: a darker orange that reads on white, `#A3520F`.
pub const SWEEP_TEXT: RGBColor = RGBColor(0xA3, 0x52, 0x0F);
/// The current operating point (inside a white ring with a dark outline): plum, `#A3367D`.
pub const CURRENT: RGBColor = RGBColor(0xA3, 0x36, 0x7D);
/// Text: near-black, `#23272E`.
pub const INK: RGBColor = RGBColor(0x23, 0x27, 0x2E);
/// Secondary text (messages, bar totals): grey, `#5C6570`.
pub const INK_SOFT: RGBColor = RGBColor(0x5C, 0x65, 0x70);
/// Axis lines: `#4A4F57`.
pub const AXIS: RGBColor = RGBColor(0x4A, 0x4F, 0x57);
/// Major grid lines and the legend's border: `#D3D7DC`.
pub const GRID: RGBColor = RGBColor(0xD3, 0xD7, 0xDC);
/// Minor grid lines: `#EDEFF2`.
pub const GRID_LIGHT: RGBColor = RGBColor(0xED, 0xEF, 0xF2);
/// Chart background: white, `#FFFFFF`.
pub const BACKGROUND: RGBColor = RGBColor(0xFF, 0xFF, 0xFF);

/// One point of the precision–specificity trade-off.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TradePoint {
    pub threshold: f64,
    pub specificity: f64,
    pub precision: f64,
}

/// Chart 1: precision (y) against specificity (x).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct TradeoffView {
    /// The exact curve for one threshold shared by every depth (may be empty).
    pub curve: Vec<TradePoint>,
    /// The current operating point, if there are predictions.
    pub current: Option<TradePoint>,
    /// Where the operating point goes as one depth's threshold moves from 0 to 1 (others held):
    /// (depth, points ordered by threshold).
    pub sweep: Option<(usize, Vec<TradePoint>)>,
    /// "cumulative" or "conditional", for the legend.
    pub rule: String,
    /// Named settings to mark (the suggestion and its shared-threshold baseline), each with
    /// its legend text: the first as a triangle, the others as crosses.
    pub marks: Vec<(String, TradePoint)>,
}

/// Chart 2: share of predictions stopping at each depth, stacked by outcome.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct StopView {
    /// Index = depth 0..=D; each entry (correct, unverifiable, wrong) as shares of all predictions.
    pub shares: Vec<(f64, f64, f64)>,
}

#[cfg(test)]
#[allow(clippy::unwrap_used)] // a failed render should fail the test
mod tests {
    use super::labels::*;
    use super::*;
    use plotters::coord::Shift;
    use plotters::prelude::*;
    use plotters_backend::{
        BackendColor, BackendCoord, BackendStyle, BackendTextStyle, DrawingBackend,
        DrawingErrorKind,
    };
    use std::path::PathBuf;

    /// The SVG backend with a fixed text measure (0.52 em per character, 1 em high), so that the
    /// layout never depends on fonts installed on the machine or on plotters' font features.
    struct FixedTextSvg<'a>(SVGBackend<'a>);

    impl DrawingBackend for FixedTextSvg<'_> {
        type ErrorType = <SVGBackend<'static> as DrawingBackend>::ErrorType;

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
        fn draw_text<S: BackendTextStyle>(
            &mut self,
            text: &str,
            style: &S,
            pos: BackendCoord,
        ) -> Result<(), DrawingErrorKind<Self::ErrorType>> {
            self.0.draw_text(text, style, pos)
        }
        fn estimate_text_size<S: BackendTextStyle>(
            &self,
            text: &str,
            style: &S,
        ) -> Result<(u32, u32), DrawingErrorKind<Self::ErrorType>> {
            let size = style.size();
            let chars = text.chars().count() as f64;
            Ok(((size * 0.52 * chars).ceil() as u32, size.ceil() as u32))
        }
        fn blit_bitmap(
            &mut self,
            pos: BackendCoord,
            dim: (u32, u32),
            src: &[u8],
        ) -> Result<(), DrawingErrorKind<Self::ErrorType>> {
            self.0.blit_bitmap(pos, dim, src)
        }
    }

    type Area<'a> = DrawingArea<FixedTextSvg<'a>, Shift>;
    type Outcome = Result<(), DrawingAreaErrorKind<std::io::Error>>;

    /// Renders with `draw` on a `w`×`h` SVG and returns the SVG text.
    fn render(size: (u32, u32), draw: impl FnOnce(&Area) -> Outcome) -> String {
        let mut svg = String::new();
        {
            let root = FixedTextSvg(SVGBackend::with_string(&mut svg, size)).into_drawing_area();
            draw(&root).unwrap();
            root.present().unwrap();
        }
        svg
    }

    fn tradeoff_svg(view: &TradeoffView, size: (u32, u32)) -> String {
        render(size, |a| draw_tradeoff(a, view))
    }

    fn stops_svg(view: &StopView, size: (u32, u32)) -> String {
        render(size, |a| draw_stops(a, view))
    }

    /// Writes an SVG under `target/charts/` for people to look at.
    fn save(name: &str, svg: &str) {
        let target = std::env::var_os("CARGO_TARGET_DIR")
            .map(PathBuf::from)
            .unwrap_or_else(|| PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../target"));
        let dir = target.join("charts");
        std::fs::create_dir_all(&dir).unwrap();
        std::fs::write(dir.join(name), svg).unwrap();
    }

    fn tp(threshold: f64, specificity: f64, precision: f64) -> TradePoint {
        TradePoint {
            threshold,
            specificity,
            precision,
        }
    }

    /// A plausible trade-off: raising the shared threshold stops earlier, trading specificity
    /// for precision.
    fn realistic_tradeoff() -> TradeoffView {
        let at = |t: f64| tp(t, 0.93 * (1.0 - t).powf(0.6), 0.58 + 0.41 * t.powf(0.7));
        let curve = (0..=200).map(|i| at(f64::from(i) / 200.0)).collect();
        let current = tp(0.4123, 0.4123, 0.9312);
        let sweep = (0..=20)
            .map(|i| {
                let t = f64::from(i) / 20.0;
                // Passes through the current point at t = 0.63, as a real sweep does.
                tp(t, 0.62 - 0.33 * t, 0.86 + 0.0897 * t.sqrt())
            })
            .collect();
        TradeoffView {
            curve,
            current: Some(current),
            sweep: Some((2, sweep)),
            rule: "cumulative".into(),
            marks: Vec::new(),
        }
    }

    fn realistic_stops() -> StopView {
        StopView {
            shares: vec![
                (0.03, 0.0, 0.0),
                (0.08, 0.01, 0.01),
                (0.15, 0.03, 0.04),
                (0.22, 0.05, 0.06),
                (0.14, 0.04, 0.05),
                (0.05, 0.0, 0.04),
            ],
        }
    }

    fn hex(c: RGBColor) -> String {
        format!("fill=\"#{:02X}{:02X}{:02X}\"", c.0, c.1, c.2)
    }

    /// Filled rectangles of one colour.
    fn rects_of(svg: &str, c: RGBColor) -> usize {
        let fill = hex(c);
        svg.split("<rect")
            .skip(1)
            .filter(|r| r.contains(&fill))
            .count()
    }

    /// Whether the SVG has a text element reading exactly `text`.
    fn has_text(svg: &str, text: &str) -> bool {
        svg.contains(&format!(">\n{text}\n</text>"))
    }

    fn assert_sane(svg: &str) {
        assert!(svg.starts_with("<svg"), "{svg}");
        assert!(!svg.contains("NaN"), "NaN in {svg}");
        assert!(!svg.contains("inf\""), "inf in {svg}");
    }

    #[test]
    fn tradeoff_draws_axes_series_legend_and_current_label() {
        let view = realistic_tradeoff();
        let svg = tradeoff_svg(&view, (600, 380));
        save("tradeoff.svg", &svg);
        save("tradeoff@2x.svg", &tradeoff_svg(&view, (1200, 760)));
        assert_sane(&svg);
        for text in [
            TRADEOFF_X_DESC,
            TRADEOFF_Y_DESC,
            CURVE_LABEL,
            "depth 2 from 0 to 1",
            CURRENT_LABEL,
            "rule: cumulative",
            "now 0.9312 @ 0.4123",
        ] {
            assert!(has_text(&svg, text), "missing {text:?}");
        }
        assert!(!svg.contains(EMPTY_MESSAGE));
        // The curve is one polyline in its colour; the sweep's markers are circles in its colour
        // (one per tenth of the threshold, 11 on the chart, and one in the legend).
        let curve_stroke = format!("stroke=\"#{:02X}{:02X}{:02X}\"", CURVE.0, CURVE.1, CURVE.2);
        assert!(svg
            .split("<polyline")
            .skip(1)
            .any(|p| p.contains(&curve_stroke)));
        let sweep_dots = svg
            .split("<circle")
            .skip(1)
            .filter(|c| c.contains(&hex(SWEEP)))
            .count();
        assert_eq!(sweep_dots, 11 + 1);
        // A few tenths are labelled, in the sweep's text colour, none twice.
        let tenth_texts: Vec<&str> = svg
            .split("<text")
            .skip(1)
            .filter(|t| t.contains(&hex(SWEEP_TEXT)))
            .filter_map(|t| t.split(">\n").nth(1)?.split('\n').next())
            .collect();
        assert!(
            (2..=LABELLED_TENTHS.len()).contains(&tenth_texts.len()),
            "{tenth_texts:?}"
        );
        assert!(tenth_texts.iter().all(|t| t.starts_with("0.")));
        // Ticks read 0.0 .. 1.0 on x and reach 1.0 on y.
        for tick in ["0.0", "0.5", "1.0"] {
            assert!(has_text(&svg, tick), "missing tick {tick}");
        }
    }

    #[test]
    fn tradeoff_marks_the_suggestion_and_its_baseline_with_their_names() {
        let mut view = realistic_tradeoff();
        let current = view.current.expect("current");
        view.marks = vec![
            ("suggested".into(), current),
            ("shared, same guarantee".into(), tp(f64::NAN, 0.2, 0.95)),
        ];
        let svg = tradeoff_svg(&view, (600, 380));
        save("tradeoff-marks.svg", &svg);
        assert_sane(&svg);
        for text in ["suggested", "shared, same guarantee", CURRENT_LABEL] {
            assert!(has_text(&svg, text), "missing {text:?}");
        }
        // A hollow triangle (a closed ink polyline of 4 points) on the chart and in the
        // legend; crosses in the curve's colour (two strokes each) on the chart and legend.
        let ink = format!("stroke=\"#{:02X}{:02X}{:02X}\"", INK.0, INK.1, INK.2);
        let triangles = svg
            .split("<polyline")
            .skip(1)
            .filter(|p| p.contains(&ink))
            .filter(|p| {
                let pts = p
                    .split("points=\"")
                    .nth(1)
                    .and_then(|r| r.split('"').next());
                pts.is_some_and(|pts| {
                    let v: Vec<&str> = pts.split_whitespace().collect();
                    v.len() == 4 && v.first() == v.last()
                })
            })
            .count();
        assert_eq!(triangles, 2, "one on the chart, one in the legend");
        let without = tradeoff_svg(&realistic_tradeoff(), (600, 380));
        assert!(!has_text(&without, "suggested"));
    }

    #[test]
    fn charts_draw_inside_sub_areas() {
        // Labels and legends are placed in area pixels; an area that does not start at the
        // backend's origin must not shift them.
        let svg = render((1200, 380), |root| {
            let (left, right) = root.split_horizontally(600);
            draw_tradeoff(&left, &realistic_tradeoff())?;
            draw_stops(&right, &realistic_stops())
        });
        save("side-by-side.svg", &svg);
        assert_sane(&svg);
        assert!(has_text(&svg, "now 0.9312 @ 0.4123") && has_text(&svg, "unverifiable"));
        // The stops legend is centred over the right half.
        let legend_x: i32 = svg
            .split("<text")
            .find(|t| t.contains(">\ncorrect\n"))
            .and_then(|t| t.split("x=\"").nth(1))
            .and_then(|t| t.split('"').next())
            .unwrap()
            .parse()
            .unwrap();
        assert!(legend_x > 600 + 100, "{legend_x}");
    }

    #[test]
    fn tradeoff_without_predictions_says_so() {
        for view in [
            TradeoffView::default(),
            TradeoffView {
                rule: "conditional".into(),
                ..TradeoffView::default()
            },
            TradeoffView {
                curve: vec![tp(0.5, f64::NAN, 0.9)],
                ..TradeoffView::default()
            },
        ] {
            let svg = tradeoff_svg(&view, (600, 380));
            save("empty-tradeoff.svg", &svg);
            assert_sane(&svg);
            assert!(has_text(&svg, EMPTY_MESSAGE));
            assert!(svg.contains(TRADEOFF_X_DESC) && svg.contains(TRADEOFF_Y_DESC));
            assert!(!svg.contains(CURVE_LABEL));
        }
    }

    #[test]
    fn stops_draw_one_rect_per_nonzero_segment_and_a_legend() {
        let view = realistic_stops();
        let svg = stops_svg(&view, (600, 380));
        save("stops.svg", &svg);
        save("stops@2x.svg", &stops_svg(&view, (1200, 760)));
        assert_sane(&svg);
        for text in [
            STOPS_X_DESC,
            STOPS_Y_DESC,
            "correct",
            "unverifiable",
            "wrong",
            "0 (root)",
        ] {
            assert!(has_text(&svg, text), "missing {text:?}");
        }
        assert!(!svg.contains(EMPTY_MESSAGE));
        let nonzero =
            |f: fn(&(f64, f64, f64)) -> f64| view.shares.iter().filter(|s| f(s) > 0.0).count();
        // One rect per non-zero segment plus the legend swatch, per outcome.
        assert_eq!(rects_of(&svg, CORRECT), nonzero(|s| s.0) + 1);
        assert_eq!(rects_of(&svg, UNVERIFIABLE), nonzero(|s| s.1) + 1);
        assert_eq!(rects_of(&svg, WRONG), nonzero(|s| s.2) + 1);
        // And nothing else but the background.
        let segments = nonzero(|s| s.0) + nonzero(|s| s.1) + nonzero(|s| s.2);
        assert_eq!(segments, 15);
        assert_eq!(svg.matches("<rect").count(), 1 + segments + 3);
        // Totals over the bars.
        for total in ["3%", "10%", "22%", "33%", "23%", "9%"] {
            assert!(has_text(&svg, total), "missing total {total}");
        }
    }

    #[test]
    fn stops_without_predictions_say_so() {
        for view in [
            StopView::default(),
            StopView {
                shares: vec![(0.0, 0.0, 0.0); 4],
            },
            StopView {
                shares: vec![(f64::NAN, -1.0, 0.0); 2],
            },
        ] {
            let svg = stops_svg(&view, (600, 380));
            save("empty-stops.svg", &svg);
            assert_sane(&svg);
            assert!(has_text(&svg, EMPTY_MESSAGE));
            assert!(svg.contains(STOPS_X_DESC) && svg.contains(STOPS_Y_DESC));
            assert_eq!(svg.matches("<rect").count(), 1, "only the background");
        }
    }

    #[test]
    fn tradeoff_edge_data_does_not_panic() {
        let base = realistic_tradeoff();
        let views = [
            // A single curve point, nothing else.
            TradeoffView {
                curve: vec![tp(0.5, 0.4, 0.9)],
                ..TradeoffView::default()
            },
            // Precision 1.0 everywhere.
            TradeoffView {
                curve: base
                    .curve
                    .iter()
                    .map(|p| tp(p.threshold, p.specificity, 1.0))
                    .collect(),
                current: Some(tp(0.4, 0.4, 1.0)),
                sweep: Some((0, vec![tp(0.0, 0.5, 1.0), tp(1.0, 0.2, 1.0)])),
                rule: "conditional".into(),
                marks: Vec::new(),
            },
            // Specificity exactly 0 and 1, precision 0.
            TradeoffView {
                curve: vec![tp(0.0, 1.0, 0.0), tp(1.0, 0.0, 1.0)],
                current: Some(tp(1.0, 0.0, 1.0)),
                sweep: Some((7, vec![tp(0.0, 1.0, 0.0)])),
                rule: String::new(),
                marks: Vec::new(),
            },
            // A sweep of one point, a current point but no curve.
            TradeoffView {
                curve: vec![],
                current: Some(tp(0.3, 0.3, 0.8)),
                sweep: Some((1, vec![tp(0.3, 0.3, 0.8)])),
                rule: "cumulative".into(),
                marks: Vec::new(),
            },
            // Garbage.
            TradeoffView {
                curve: vec![
                    tp(f64::NAN, f64::NAN, 0.5),
                    tp(0.1, f64::INFINITY, 0.5),
                    tp(0.2, -3.0, 7.0),
                ],
                current: Some(tp(f64::NAN, 0.2, f64::NEG_INFINITY)),
                sweep: Some((usize::MAX, vec![])),
                rule: "cumulative".into(),
                marks: vec![("x".into(), tp(f64::NAN, f64::NAN, 2.0))],
            },
        ];
        for view in &views {
            for size in [(600, 380), (1200, 760), (160, 90), (12, 8)] {
                assert_sane(&tradeoff_svg(view, size));
            }
        }
        for (i, view) in views.iter().enumerate() {
            save(
                &format!("edge-tradeoff-{i}.svg"),
                &tradeoff_svg(view, (600, 380)),
            );
        }
        let one = tradeoff_svg(&views[0], (600, 380));
        assert!(one.contains(CURVE_LABEL) && !one.contains(EMPTY_MESSAGE));
        let ones = tradeoff_svg(&views[1], (600, 380));
        assert!(ones.contains("now 1.0000 @ 0.4000"));
        assert!(ones.contains("depth 0 from 0 to 1"));
        let no_curve = tradeoff_svg(&views[3], (600, 380));
        assert!(no_curve.contains(CURRENT_LABEL) && !no_curve.contains(CURVE_LABEL));
    }

    #[test]
    fn stops_edge_data_does_not_panic() {
        let many: Vec<(f64, f64, f64)> = (0..40)
            .map(|d| (0.015, 0.005, f64::from(d) * 1e-4))
            .collect();
        let views = [
            StopView {
                shares: vec![(1.0, 0.0, 0.0)],
            },
            StopView {
                shares: vec![(0.0, 0.0, 0.0), (0.0, 0.0, 1.0)],
            },
            StopView {
                shares: vec![(0.5, 0.3, 0.2), (0.0, 0.0, 0.0)],
            },
            StopView {
                shares: vec![(1e-9, 0.0, 0.0); 3],
            },
            StopView { shares: many },
            StopView {
                shares: vec![(f64::INFINITY, 0.2, 0.1), (0.1, f64::NAN, 0.1)],
            },
        ];
        for view in &views {
            for size in [(600, 380), (1200, 760), (160, 90), (12, 8)] {
                assert_sane(&stops_svg(view, size));
            }
        }
        for (i, view) in views.iter().enumerate() {
            save(&format!("edge-stops-{i}.svg"), &stops_svg(view, (600, 380)));
        }
        let single = stops_svg(&views[0], (600, 380));
        assert_eq!(rects_of(&single, CORRECT), 2);
        assert!(has_text(&single, "100%"));
        let deep = stops_svg(&views[4], (600, 380));
        assert!(
            deep.contains("(0 = root)"),
            "no room for \"0 (root)\" at 40 depths"
        );
    }
}
