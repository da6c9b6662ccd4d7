//! The report's two charts, drawn with plotters' SVG backend:
//! - a slope chart of ranks, baseline to adjusted, one line per entity, labelled at both ends;
//! - a dot chart of baseline and adjusted values on one common axis, with margin whiskers.
//!
//! Palette (our own, chosen to stay distinct under the common colour-vision deficiencies):
//! deep teal for moves up, burnt orange for moves down, slate for no move. Direct labels instead
//! of legends; each SVG gets a `<title>` and `<desc>` for screen readers.

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

pub const UP: RGBColor = RGBColor(0x00, 0x6d, 0x77);
pub const DOWN: RGBColor = RGBColor(0xc4, 0x5a, 0x00);
pub const SAME: RGBColor = RGBColor(0x5c, 0x67, 0x73);
const INK: RGBColor = RGBColor(0x22, 0x22, 0x22);

/// One entity in a chart.
#[derive(Debug, Clone)]
pub struct Point {
    pub label: String,
    pub baseline: f64,
    pub adjusted: f64,
    pub rank_baseline: i64,
    pub rank_adjusted: i64,
    pub moe_baseline: Option<f64>,
    pub moe_adjusted: Option<f64>,
}

fn colour(p: &Point) -> RGBColor {
    match p.rank_baseline.cmp(&p.rank_adjusted) {
        std::cmp::Ordering::Greater => UP,
        std::cmp::Ordering::Less => DOWN,
        std::cmp::Ordering::Equal => SAME,
    }
}

/// Adds `<title>` and `<desc>` right after the opening `<svg ...>` tag.
fn accessible(svg: String, title: &str, desc: &str) -> String {
    let escape = crate::report::format::html_escape;
    match svg.find('>') {
        Some(end) => format!(
            "{}<title>{}</title><desc>{}</desc>{}",
            &svg[..=end],
            escape(title),
            escape(desc),
            &svg[end + 1..]
        ),
        None => svg,
    }
}

type Drawn = Result<(), Box<dyn std::error::Error>>;

/// A tick label as a reader writes it: 100, not 100.0; 1,500; 2.5 (six significant digits at
/// most, trailing zeros dropped).
fn tick(x: f64) -> String {
    let text = crate::report::format::format_number(
        x,
        crate::report::format::Rounding::Significant(6),
        true,
    );
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    }
}

/// Ranks from baseline (left) to adjusted (right); rank 1 at the top.
pub fn slope_chart(points: &[Point], baseline: &str, title: &str, desc: &str) -> String {
    let height = 90 + 34 * points.len().max(2) as u32;
    let mut svg = String::new();
    let drawn: Drawn = (|| {
        let root = SVGBackend::with_string(&mut svg, (760, height)).into_drawing_area();
        root.fill(&WHITE)?;
        let k = points
            .iter()
            .map(|p| p.rank_baseline.max(p.rank_adjusted))
            .max()
            .unwrap_or(1) as f64;
        let mut chart = ChartBuilder::on(&root)
            .margin_top(40)
            .margin_bottom(20)
            .margin_left(230)
            .margin_right(230)
            .build_cartesian_2d(0.0f64..1.0, (k + 0.5)..0.5f64)?;
        let header = ("sans-serif", 15).into_font().color(&INK);
        root.draw(&Text::new(
            format!("rank before ({baseline})"),
            (60, 12),
            header.clone(),
        ))?;
        root.draw(&Text::new("rank after (adjusted)", (530, 12), header))?;
        for p in points {
            let c = colour(p);
            let (y0, y1) = (p.rank_baseline as f64, p.rank_adjusted as f64);
            chart.draw_series(LineSeries::new(
                vec![(0.0, y0), (1.0, y1)],
                c.stroke_width(3),
            ))?;
            chart.draw_series([
                Circle::new((0.0, y0), 5, c.filled()),
                Circle::new((1.0, y1), 5, c.filled()),
            ])?;
            let left = ("sans-serif", 14)
                .into_font()
                .color(&c)
                .pos(Pos::new(HPos::Right, VPos::Center));
            let right = ("sans-serif", 14)
                .into_font()
                .color(&c)
                .pos(Pos::new(HPos::Left, VPos::Center));
            let (lx, ly) = chart.backend_coord(&(0.0, y0));
            let (rx, ry) = chart.backend_coord(&(1.0, y1));
            root.draw(&Text::new(
                format!("{}  {}", p.label, p.rank_baseline),
                (lx - 12, ly),
                left,
            ))?;
            root.draw(&Text::new(
                format!("{}  {}", p.rank_adjusted, p.label),
                (rx + 12, ry),
                right,
            ))?;
        }
        root.present()?;
        Ok(())
    })();
    if drawn.is_err() {
        return String::new();
    }
    accessible(svg, title, desc)
}

/// Baseline (hollow) and adjusted (filled) values of each entity on one axis, sorted by the
/// adjusted value, with whiskers of ± the margin of error when there is one.
pub fn dot_chart(
    points: &[Point],
    baseline: &str,
    axis_label: &str,
    title: &str,
    desc: &str,
) -> String {
    let mut sorted: Vec<&Point> = points.iter().collect();
    sorted.sort_by(|a, b| b.adjusted.total_cmp(&a.adjusted));
    let height = 110 + 30 * sorted.len().max(2) as u32;
    let mut svg = String::new();
    let drawn: Drawn = (|| {
        let root = SVGBackend::with_string(&mut svg, (760, height)).into_drawing_area();
        root.fill(&WHITE)?;
        let reach = |p: &&Point| {
            let b = p.baseline + p.moe_baseline.unwrap_or(0.0);
            let a = p.adjusted + p.moe_adjusted.unwrap_or(0.0);
            b.max(a)
        };
        let max = sorted.iter().map(reach).fold(0.0f64, f64::max) * 1.05;
        let min = sorted
            .iter()
            .map(|p| {
                (p.baseline - p.moe_baseline.unwrap_or(0.0))
                    .min(p.adjusted - p.moe_adjusted.unwrap_or(0.0))
            })
            .fold(0.0f64, f64::min);
        let n = sorted.len() as f64;
        let mut chart = ChartBuilder::on(&root)
            .margin(20)
            .x_label_area_size(45)
            .y_label_area_size(170)
            .build_cartesian_2d(min..max.max(1e-9), (n - 0.5)..-0.5f64)?;
        let names: Vec<String> = sorted.iter().map(|p| p.label.clone()).collect();
        chart
            .configure_mesh()
            .disable_y_mesh()
            .y_labels(sorted.len())
            .y_label_formatter(&|y| {
                let i = y.round();
                if (y - i).abs() < 1e-6 && i >= 0.0 && (i as usize) < names.len() {
                    names[i as usize].clone()
                } else {
                    String::new()
                }
            })
            // Ticks as a reader writes them: 100, not 100.0; 1,500, not 1500.
            .x_label_formatter(&|x| tick(*x))
            .x_desc(axis_label)
            .label_style(("sans-serif", 13).into_font().color(&INK))
            .axis_desc_style(("sans-serif", 14).into_font().color(&INK))
            .light_line_style(RGBColor(0xf0, 0xf0, 0xf0))
            .draw()?;
        for (i, p) in sorted.iter().enumerate() {
            let y = i as f64;
            chart.draw_series(LineSeries::new(
                vec![(p.baseline, y), (p.adjusted, y)],
                RGBColor(0xb8, 0xb8, 0xb8).stroke_width(2),
            ))?;
            for (value, moe, c) in [
                (p.baseline, p.moe_baseline, SAME),
                (p.adjusted, p.moe_adjusted, UP),
            ] {
                if let Some(m) = moe {
                    chart.draw_series(LineSeries::new(
                        vec![(value - m, y), (value + m, y)],
                        c.stroke_width(1),
                    ))?;
                    for end in [value - m, value + m] {
                        chart.draw_series(LineSeries::new(
                            vec![(end, y - 0.15), (end, y + 0.15)],
                            c.stroke_width(1),
                        ))?;
                    }
                }
            }
            chart.draw_series([Circle::new((p.baseline, y), 6, SAME.stroke_width(2))])?;
            chart.draw_series([Circle::new((p.adjusted, y), 6, UP.filled())])?;
        }
        let key = ("sans-serif", 13).into_font().color(&INK);
        root.draw(&Circle::new((190, 12), 6, SAME.stroke_width(2)))?;
        root.draw(&Text::new(baseline.to_string(), (202, 6), key.clone()))?;
        root.draw(&Circle::new((400, 12), 6, UP.filled()))?;
        root.draw(&Text::new("adjusted", (412, 6), key))?;
        root.present()?;
        Ok(())
    })();
    if drawn.is_err() {
        return String::new();
    }
    accessible(svg, title, desc)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn points() -> Vec<Point> {
        vec![
            Point {
                label: "Aa".into(),
                baseline: 10.0,
                adjusted: 30.0,
                rank_baseline: 2,
                rank_adjusted: 1,
                moe_baseline: None,
                moe_adjusted: Some(2.0),
            },
            Point {
                label: "Bb".into(),
                baseline: 20.0,
                adjusted: 25.0,
                rank_baseline: 1,
                rank_adjusted: 2,
                moe_baseline: None,
                moe_adjusted: None,
            },
        ]
    }

    #[test]
    fn ticks_carry_no_spurious_decimals() {
        assert_eq!(tick(100.0), "100");
        assert_eq!(tick(1500.0), "1,500");
        assert_eq!(tick(2.5), "2.5");
        assert_eq!(tick(0.30000000000000004), "0.3");
    }

    #[test]
    fn charts_are_svg_with_title_desc_and_direct_labels() {
        let slope = slope_chart(&points(), "baseline", "Ranks", "two entities");
        assert!(
            slope.starts_with("<svg"),
            "{}",
            &slope[..slope.len().min(200)]
        );
        assert!(slope.contains("<title>Ranks</title><desc>two entities</desc>"));
        assert!(slope.contains("Aa") && slope.contains("Bb"));
        let dots = dot_chart(
            &points(),
            "baseline",
            "international dollars",
            "Values",
            "one axis",
        );
        assert!(dots.contains("international dollars"));
        assert!(dots.contains("<title>Values</title>"));
    }
}
