//! SVG figures with plotters: time series, parity, histogram.

use plotters::coord::Shift;
use plotters::prelude::*;

const COLOURS: [RGBColor; 8] = [
    RGBColor(42, 111, 151),
    RGBColor(217, 130, 43),
    RGBColor(87, 153, 87),
    RGBColor(170, 68, 101),
    RGBColor(110, 90, 160),
    RGBColor(120, 120, 120),
    RGBColor(60, 170, 170),
    RGBColor(200, 170, 40),
];

/// Most points drawn per series (long series are thinned evenly; keeps the page small).
const MAX_POINTS: usize = 4000;

fn thin(points: &[(f64, f64)]) -> impl Iterator<Item = (f64, f64)> + '_ {
    points
        .iter()
        .copied()
        .step_by(points.len().div_ceil(MAX_POINTS).max(1))
}

/// Wraps an SVG in a captioned figure.
pub fn figure(svg: &str, caption: &str) -> String {
    format!("<figure>{svg}<figcaption>{caption}</figcaption></figure>")
}

/// Draws into an SVG string of `size`; a drawing error leaves what was drawn so far.
fn render(
    size: (u32, u32),
    draw: impl FnOnce(&DrawingArea<SVGBackend<'_>, Shift>) -> Option<()>,
) -> String {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, size).into_drawing_area();
        let _ = root.fill(&WHITE);
        let _ = draw(&root);
        let _ = root.present();
    }
    svg
}

fn bounds<'a>(points: impl Iterator<Item = &'a (f64, f64)>) -> ((f64, f64), (f64, f64)) {
    let (mut x0, mut x1, mut y0, mut y1) = (
        f64::INFINITY,
        f64::NEG_INFINITY,
        f64::INFINITY,
        f64::NEG_INFINITY,
    );
    for (x, y) in points {
        x0 = x0.min(*x);
        x1 = x1.max(*x);
        y0 = y0.min(*y);
        y1 = y1.max(*y);
    }
    if !x0.is_finite() {
        return ((0.0, 1.0), (0.0, 1.0));
    }
    let pad = ((y1 - y0) * 0.05).max(1e-12);
    (
        (x0, if x1 > x0 { x1 } else { x0 + 1.0 }),
        (y0 - pad, y1 + pad),
    )
}

/// One series of a figure: name, (x, y) points, drawn as points (true) or a line (false).
pub type Series<'a> = (&'a str, &'a [(f64, f64)], bool);

/// Lines (or points where the flag is set) against a shared x axis.
pub fn time_series(series: &[Series<'_>], x_label: &str, y_label: &str) -> String {
    render((1000, 340), |root| {
        let ((x0, x1), (y0, y1)) = bounds(series.iter().flat_map(|s| s.1.iter()));
        let mut chart = ChartBuilder::on(root)
            .margin(10)
            .x_label_area_size(35)
            .y_label_area_size(70)
            .build_cartesian_2d(x0..x1, y0..y1)
            .ok()?;
        let magnitude = y0.abs().max(y1.abs());
        let scientific = magnitude > 0.0 && !(1e-2..1e5).contains(&magnitude);
        let format_y = move |v: &f64| {
            if scientific {
                format!("{v:.2e}")
            } else {
                format!("{v:.3}")
            }
        };
        chart
            .configure_mesh()
            .x_desc(x_label)
            .y_desc(y_label)
            .y_label_formatter(&format_y)
            .light_line_style(RGBColor(235, 240, 243))
            .draw()
            .ok()?;
        for (i, (name, points, as_points)) in series.iter().enumerate() {
            let colour = COLOURS[i % COLOURS.len()];
            let drawn = if *as_points {
                chart
                    .draw_series(thin(points).map(|(x, y)| Circle::new((x, y), 3, colour.filled())))
            } else {
                chart.draw_series(LineSeries::new(thin(points), colour.stroke_width(1)))
            };
            drawn.ok()?.label(*name).legend(move |(x, y)| {
                PathElement::new(vec![(x, y), (x + 16, y)], colour.stroke_width(2))
            });
        }
        chart
            .configure_series_labels()
            .background_style(WHITE.mix(0.8))
            .border_style(RGBColor(200, 200, 200))
            .draw()
            .ok()
    })
}

/// Estimate against measurement with the equality line.
pub fn parity(pairs: &[(f64, f64)], unit: &str) -> String {
    render((480, 440), |root| {
        let ((x0, x1), (y0, y1)) = bounds(pairs.iter());
        let (lo, hi) = (x0.min(y0), x1.max(y1));
        let mut chart = ChartBuilder::on(root)
            .margin(10)
            .x_label_area_size(35)
            .y_label_area_size(60)
            .build_cartesian_2d(lo..hi, lo..hi)
            .ok()?;
        chart
            .configure_mesh()
            .x_desc(format!("measured{}", super::unit_suffix(unit)))
            .y_desc(format!("estimate{}", super::unit_suffix(unit)))
            .draw()
            .ok()?;
        chart
            .draw_series(LineSeries::new(
                [(lo, lo), (hi, hi)],
                RGBColor(120, 120, 120),
            ))
            .ok()?;
        chart
            .draw_series(
                thin(pairs).map(|(x, y)| Circle::new((x, y), 2, COLOURS[0].mix(0.5).filled())),
            )
            .ok()?;
        Some(())
    })
}

/// Histogram of values in 30 bins.
pub fn histogram(values: &[f64], unit: &str) -> String {
    render((640, 300), |root| {
        let lo = values.iter().copied().fold(f64::INFINITY, f64::min);
        let hi = values.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        if !(lo.is_finite() && hi > lo) {
            return None;
        }
        let bins = 30;
        let width = (hi - lo) / bins as f64;
        let mut counts = vec![0usize; bins];
        for v in values {
            counts[(((v - lo) / width) as usize).min(bins - 1)] += 1;
        }
        let top = counts.iter().copied().max().unwrap_or(1) as f64;
        let mut chart = ChartBuilder::on(root)
            .margin(10)
            .x_label_area_size(35)
            .y_label_area_size(50)
            .build_cartesian_2d(lo..hi, 0.0..top * 1.05)
            .ok()?;
        chart
            .configure_mesh()
            .x_desc(format!("residual{}", super::unit_suffix(unit)))
            .y_desc("samples")
            .draw()
            .ok()?;
        chart
            .draw_series(counts.iter().enumerate().map(|(i, &n)| {
                let x = lo + i as f64 * width;
                Rectangle::new(
                    [(x, 0.0), (x + width * 0.95, n as f64)],
                    COLOURS[0].filled(),
                )
            }))
            .ok()?;
        Some(())
    })
}
