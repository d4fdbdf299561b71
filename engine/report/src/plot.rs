//! Drawing a module's [`Plot`] as a vector SVG with plotters: axes in the
//! project's display units, ticks, labels with units, a legend, and equal
//! scale for elevations. The SVG text is set by Typst with the package's
//! own fonts, so plots match the page. Deterministic: the same plot gives
//! the same bytes. Owns no state.

use packwright_api::units::si_to_unit;
use packwright_api::{Dimension, UnitSystem};
use packwright_api::{LayerStyle, Plot};
use packwright_core::display::pretty_unit;
use plotters::prelude::*;

/// The package's plot colours: ink, rust, teal, olive, plum.
const PALETTE: [RGBColor; 5] = [
    RGBColor(0x1b, 0x3a, 0x5c),
    RGBColor(0xb5, 0x56, 0x2a),
    RGBColor(0x2f, 0x7f, 0x7a),
    RGBColor(0x7a, 0x74, 0x1e),
    RGBColor(0x6d, 0x3b, 0x6e),
];
const SURFACE: RGBColor = RGBColor(0x44, 0x44, 0x44);
const REFERENCE: RGBColor = RGBColor(0x88, 0x88, 0x88);
const FONT: &str = "Libertinus Serif";

/// A layer converted to display units: legend text, style, points.
type Layer<'a> = (Option<&'a str>, LayerStyle, Vec<(f64, f64)>);

/// Width of every plot in SVG pixels; the package scales it to the text width.
const WIDTH: u32 = 720;

/// The unit an axis is drawn in.
fn axis_unit(dimension: Dimension, system: UnitSystem) -> &'static str {
    match (dimension, system) {
        (Dimension::Velocity, UnitSystem::Si) => "m/s",
        (Dimension::Force, UnitSystem::Si) => "kN",
        _ => dimension.default_display_unit(system),
    }
}

fn convert(x: f64, dimension: Dimension, unit: &str) -> f64 {
    si_to_unit(x, dimension, unit).unwrap_or(x)
}

fn label(text: &str, unit: &str) -> String {
    let u = pretty_unit(unit);
    if u.is_empty() {
        text.to_string()
    } else {
        format!("{text} ({u})")
    }
}

/// A range with a little margin, never empty.
fn padded(lo: f64, hi: f64) -> (f64, f64) {
    let span = hi - lo;
    let pad = if span > 0.0 {
        span * 0.05
    } else {
        lo.abs().max(1.0) * 0.1
    };
    (lo - pad, hi + pad)
}

/// Draws `plot` as SVG text.
pub fn svg(plot: &Plot, system: UnitSystem) -> Result<String, String> {
    let xu = axis_unit(plot.x.dimension, system);
    let yu = axis_unit(plot.y.dimension, system);
    let layers: Vec<Layer> = plot
        .layers
        .iter()
        .map(|l| {
            (
                l.label.as_deref(),
                l.style,
                l.points
                    .iter()
                    .map(|(x, y)| {
                        (
                            convert(*x, plot.x.dimension, xu),
                            convert(*y, plot.y.dimension, yu),
                        )
                    })
                    .collect(),
            )
        })
        .collect();
    let all = layers.iter().flat_map(|l| l.2.iter());
    let (mut x0, mut x1, mut y0, mut y1) = (f64::MAX, f64::MIN, f64::MAX, f64::MIN);
    for (x, y) in all {
        x0 = x0.min(*x);
        x1 = x1.max(*x);
        y0 = y0.min(*y);
        y1 = y1.max(*y);
    }
    if x0 > x1 {
        return Err(format!("plot `{}` has no points", plot.id));
    }
    let (x0, x1) = padded(x0, x1);
    let (mut y0, mut y1) = padded(y0, y1);
    let (left, bottom, margin) = (70u32, 50u32, 16u32);
    let plot_w = (WIDTH - left - margin) as f64;
    let mut height = 420u32;
    if plot.equal_scale {
        // Same length per unit on both axes: grow the y range or the
        // picture's height until the aspect ratios agree.
        let per_unit = plot_w / (x1 - x0);
        let needed_h = (y1 - y0) * per_unit;
        let max_h = 620.0;
        if needed_h <= max_h {
            height = (needed_h.max(240.0) + (bottom + margin) as f64) as u32;
            let plot_h = (height - bottom - margin) as f64;
            let extra = plot_h / per_unit - (y1 - y0);
            y0 -= extra / 2.0;
            y1 += extra / 2.0;
        } else {
            height = (max_h as u32) + bottom + margin;
            return draw(
                plot,
                &layers,
                (x0, x1),
                (y0, y1),
                height,
                xu,
                yu,
                Some(max_h / (y1 - y0)),
            );
        }
    }
    draw(plot, &layers, (x0, x1), (y0, y1), height, xu, yu, None)
}

/// The corner of the plot area with the fewest points under it, so the
/// legend hides as little of the data as it can.
fn emptiest_corner(
    layers: &[Layer],
    (x0, x1): (f64, f64),
    (y0, y1): (f64, f64),
) -> SeriesLabelPosition {
    let (w, h) = (x1 - x0, y1 - y0);
    let corners = [
        (SeriesLabelPosition::UpperRight, 0.55, 0.6),
        (SeriesLabelPosition::UpperLeft, 0.0, 0.6),
        (SeriesLabelPosition::LowerRight, 0.55, 0.0),
        (SeriesLabelPosition::LowerLeft, 0.0, 0.0),
    ];
    // Lines are sampled between their points, so a long straight segment
    // through a corner counts too.
    let samples: Vec<(f64, f64)> = layers
        .iter()
        .flat_map(|l| {
            let pts = &l.2;
            let mut out: Vec<(f64, f64)> = pts.clone();
            for pair in pts.windows(2) {
                for k in 1..10 {
                    let t = k as f64 / 10.0;
                    out.push((
                        pair[0].0 + t * (pair[1].0 - pair[0].0),
                        pair[0].1 + t * (pair[1].1 - pair[0].1),
                    ));
                }
            }
            out
        })
        .collect();
    let count = |fx: f64, fy: f64| {
        samples
            .iter()
            .filter(|(x, y)| {
                let (u, v) = ((x - x0) / w, (y - y0) / h);
                (fx..fx + 0.45).contains(&u) && (fy..fy + 0.4).contains(&v)
            })
            .count()
    };
    let mut best = 0;
    let mut least = usize::MAX;
    for (i, (_, fx, fy)) in corners.iter().enumerate() {
        let n = count(*fx, *fy);
        if n < least {
            least = n;
            best = i;
        }
    }
    corners[best].0.clone()
}

#[allow(clippy::too_many_arguments)]
fn draw(
    plot: &Plot,
    layers: &[Layer],
    (mut x0, mut x1): (f64, f64),
    (y0, y1): (f64, f64),
    height: u32,
    xu: &str,
    yu: &str,
    shrink_x_to_scale: Option<f64>,
) -> Result<String, String> {
    if let Some(per_unit) = shrink_x_to_scale {
        // Too tall to fit: widen the x range so one unit is the same length.
        let plot_w = (WIDTH - 86) as f64;
        let needed = plot_w / per_unit;
        let mid = (x0 + x1) / 2.0;
        x0 = mid - needed / 2.0;
        x1 = mid + needed / 2.0;
    }
    let mut text = String::new();
    {
        let root = SVGBackend::with_string(&mut text, (WIDTH, height)).into_drawing_area();
        let e = |e: &dyn std::fmt::Display| format!("plot `{}`: {e}", plot.id);
        root.fill(&WHITE).map_err(|x| e(&x))?;
        let mut chart = ChartBuilder::on(&root)
            .margin(16)
            .x_label_area_size(44)
            .y_label_area_size(64)
            .build_cartesian_2d(x0..x1, y0..y1)
            .map_err(|x| e(&x))?;
        chart
            .configure_mesh()
            .x_desc(label(&plot.x.label, xu))
            .y_desc(label(&plot.y.label, yu))
            .label_style((FONT, 15))
            .axis_desc_style((FONT, 16))
            .light_line_style(RGBColor(0xee, 0xee, 0xee))
            .max_light_lines(1)
            .bold_line_style(RGBColor(0xd0, 0xd0, 0xd0))
            .x_labels(10)
            .y_labels(8)
            .draw()
            .map_err(|x| e(&x))?;
        let mut colour = 0usize;
        let mut any_label = false;
        for (name, style, points) in layers {
            let (col, width) = match style {
                LayerStyle::Surface => (SURFACE, 3),
                LayerStyle::Reference => (REFERENCE, 1),
                _ => {
                    let c = PALETTE[colour % PALETTE.len()];
                    colour += 1;
                    (c, 2)
                }
            };
            let shape = ShapeStyle::from(&col).stroke_width(width);
            let drawn = match style {
                LayerStyle::Points => chart
                    .draw_series(points.iter().map(|p| Circle::new(*p, 5, shape.filled())))
                    .map_err(|x| e(&x))?,
                LayerStyle::Dashed | LayerStyle::Reference => chart
                    .draw_series(DashedLineSeries::new(points.iter().copied(), 8, 5, shape))
                    .map_err(|x| e(&x))?,
                LayerStyle::Line | LayerStyle::Surface => chart
                    .draw_series(LineSeries::new(points.iter().copied(), shape))
                    .map_err(|x| e(&x))?,
            };
            if let Some(name) = name {
                any_label = true;
                let legend_style = shape;
                let (path, radius): (Vec<(i32, i32)>, i32) = if *style == LayerStyle::Points {
                    (Vec::new(), 4)
                } else {
                    (vec![(0, 0), (24, 0)], 0)
                };
                drawn.label(name.to_string()).legend(move |(x, y)| {
                    EmptyElement::at((x, y))
                        + PathElement::new(path.clone(), legend_style)
                        + Circle::new((12, 0), radius, legend_style.filled())
                });
            }
        }
        if any_label {
            chart
                .configure_series_labels()
                .label_font((FONT, 14))
                .background_style(WHITE.mix(0.85))
                .border_style(RGBColor(0xaa, 0xaa, 0xaa))
                .position(emptiest_corner(layers, (x0, x1), (y0, y1)))
                .draw()
                .map_err(|x| e(&x))?;
        }
        root.present().map_err(|x| e(&x))?;
    }
    Ok(text)
}
