//! The report's figures as self-contained SVG strings: the null distribution of one cell, the
//! per-dyad real-versus-pseudo plot, and the candidate-pair matrix as a heatmap.
//!
//! Owns drawing only: every number arrives computed in `super::data` types. Text goes through
//! the SVG backend, which escapes `<`, `>`, `&` and quotes itself, so labels are passed raw
//! here (escaping them again would show entities on the page). Must not touch the page layout
//! (`html.rs`) beyond borrowing its number formatting.

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::data::MatrixPlot;
use super::html::num;

/// Ink of axes, labels and outlines.
const INK: RGBColor = RGBColor(0x22, 0x22, 0x22);
/// Secondary text (notes, tick labels of the colour bar).
const MUTED: RGBColor = RGBColor(0x5f, 0x5f, 0x5f);
/// Histogram bars: a light neutral blue, so the observed-value line stands out against it.
const BAR: RGBColor = RGBColor(0x9d, 0xb4, 0xcc);
/// The observed value (and real-pair points): a dark vermilion, distinguishable from the bar
/// blue under the common colour-vision deficiencies, and also marked by width and a label.
const OBSERVED: RGBColor = RGBColor(0xb3, 0x3c, 0x00);
/// Points of the paired plot.
const POINT: RGBColor = RGBColor(0x1f, 0x4e, 0x79);
/// Hatching of excluded candidate pairs.
const HATCH: RGBColor = RGBColor(0x9a, 0x9a, 0x9a);
/// Grid lines.
const GRID: RGBColor = RGBColor(0xe3, 0xe3, 0xe3);

/// Anchors of the heatmap's sequential ramp, light to dark. Lightness falls monotonically
/// along the ramp, so the order of values survives greyscale printing and red–green colour
/// blindness; hue drifts from sand through sea green to ink blue only to separate the ends.
const RAMP: [(f64, f64, f64); 5] = [
    (250.0, 245.0, 222.0),
    (190.0, 223.0, 186.0),
    (102.0, 178.0, 170.0),
    (44.0, 113.0, 153.0),
    (27.0, 43.0, 99.0),
];

/// Plotters divides a font size by 1.24 when it writes SVG; this gives the pixel size asked.
fn font(px: f64) -> FontDesc<'static> {
    FontDesc::new(FontFamily::SansSerif, px * 1.24, FontStyle::Normal)
}

fn text_style(px: f64, color: &'static RGBColor, h: HPos, v: VPos) -> TextStyle<'static> {
    TextStyle::from(font(px)).color(color).pos(Pos::new(h, v))
}

/// Colour of `t` in [0, 1] on the sequential ramp (piecewise-linear in RGB between anchors).
pub fn ramp(t: f64) -> RGBColor {
    let t = if t.is_finite() {
        t.clamp(0.0, 1.0)
    } else {
        0.0
    };
    let segments = (RAMP.len() - 1) as f64;
    let x = t * segments;
    let i = (x.floor() as usize).min(RAMP.len() - 2);
    let f = x - i as f64;
    let (a, b) = (RAMP[i], RAMP[i + 1]);
    let mix = |p: f64, q: f64| (p + (q - p) * f).round().clamp(0.0, 255.0) as u8;
    RGBColor(mix(a.0, b.0), mix(a.1, b.1), mix(a.2, b.2))
}

/// Runs `draw` on a fresh SVG canvas; a drawing failure becomes a small SVG that says so,
/// because a report with one broken figure is still worth reading.
fn canvas<F>(size: (u32, u32), draw: F) -> String
where
    F: FnOnce(&DrawingArea<SVGBackend<'_>, Shift>) -> Result<(), String>,
{
    let mut buf = String::new();
    let outcome = {
        let root = SVGBackend::with_string(&mut buf, size).into_drawing_area();
        let drawn = root
            .fill(&WHITE)
            .map_err(|e| e.to_string())
            .and_then(|()| draw(&root));
        drawn.and_then(|()| root.present().map_err(|e| e.to_string()))
    };
    match outcome {
        Ok(()) => buf,
        Err(e) => message_svg(size, &format!("figure could not be drawn: {e}")),
    }
}

/// A figure-sized SVG carrying only a message (empty inputs, drawing failures).
fn message_svg(size: (u32, u32), message: &str) -> String {
    let mut buf = String::new();
    {
        let root = SVGBackend::with_string(&mut buf, size).into_drawing_area();
        let style = text_style(13.0, &MUTED, HPos::Center, VPos::Center);
        // A failure here leaves an empty but well-formed SVG, which is all that is left to do.
        let _ = root.fill(&WHITE);
        let _ = root.draw_text(message, &style, (size.0 as i32 / 2, size.1 as i32 / 2));
        let _ = root.present();
    }
    buf
}

fn err<E: std::fmt::Display>(what: &'static str) -> impl Fn(E) -> String {
    move |e| format!("{what}: {e}")
}

/// Axis range covering `values` with a margin, never empty.
fn padded_range(values: impl Iterator<Item = f64>, pad: f64) -> (f64, f64) {
    let (lo, hi) = values
        .filter(|v| v.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
            (a.min(v), b.max(v))
        });
    if !lo.is_finite() {
        return (0.0, 1.0);
    }
    let span = hi - lo;
    if span > 0.0 {
        (lo - pad * span, hi + pad * span)
    } else {
        let half = if lo == 0.0 { 0.5 } else { lo.abs() * 0.1 };
        (lo - half, hi + half)
    }
}

/// Number of histogram bins: the square root of the number of values, kept between 8 and 50
/// (a rule of thumb: enough bins to show the shape, few enough that bars are not noise).
fn bin_count(n: usize) -> usize {
    ((n as f64).sqrt().round() as usize).clamp(8, 50)
}

/// Histogram of the null statistics T*, with the observed T as a labelled vertical line.
pub fn histogram_svg(null: &[f64], observed: f64, title: &str) -> String {
    let size = (560, 360);
    let values: Vec<f64> = null.iter().copied().filter(|v| v.is_finite()).collect();
    if values.is_empty() {
        return message_svg(size, "no re-pairing statistics to show");
    }
    let (vlo, vhi) = padded_range(values.iter().copied(), 0.0);
    let bins = bin_count(values.len());
    let width = (vhi - vlo) / bins as f64;
    let mut counts = vec![0usize; bins];
    for &v in &values {
        let k = (((v - vlo) / width).floor() as usize).min(bins - 1);
        counts[k] += 1;
    }
    let extent = values
        .iter()
        .copied()
        .chain(std::iter::once(observed))
        .chain([vlo, vlo + width * bins as f64]);
    let (xlo, xhi) = padded_range(extent, 0.04);
    let top = counts.iter().copied().max().unwrap_or(1).max(1) as f64 * 1.18;
    let axis_desc = text_style(13.0, &INK, HPos::Center, VPos::Center);
    let tick = text_style(11.5, &INK, HPos::Center, VPos::Top);

    canvas(size, |root| {
        let mut chart = ChartBuilder::on(root)
            .caption(title, font(14.0))
            .margin(12)
            .margin_right(20)
            .x_label_area_size(46)
            .y_label_area_size(58)
            .build_cartesian_2d(xlo..xhi, 0.0..top)
            .map_err(err("histogram axes"))?;
        chart
            .configure_mesh()
            .disable_x_mesh()
            .light_line_style(WHITE)
            .bold_line_style(GRID)
            .axis_style(INK)
            .x_labels(6)
            .y_labels(6)
            .label_style(tick)
            .axis_desc_style(axis_desc)
            .x_label_formatter(&|v| num(*v))
            .y_label_formatter(&|v| format!("{v:.0}"))
            .x_desc("T* (mean synchrony of one re-pairing)")
            .y_desc("re-pairings")
            .draw()
            .map_err(err("histogram mesh"))?;
        chart
            .draw_series(
                counts
                    .iter()
                    .enumerate()
                    .filter(|(_, c)| **c > 0)
                    .map(|(k, &c)| {
                        let x0 = vlo + width * k as f64;
                        Rectangle::new([(x0, 0.0), (x0 + width, c as f64)], BAR.filled())
                    }),
            )
            .map_err(err("histogram bars"))?;
        if observed.is_finite() {
            chart
                .draw_series(LineSeries::new(
                    [(observed, 0.0), (observed, top * 0.9)],
                    OBSERVED.stroke_width(3),
                ))
                .map_err(err("observed line"))?;
            // Label on the side of the line with more room, so it stays inside the plot.
            let right_half = observed > (xlo + xhi) / 2.0;
            let (h, nudge) = if right_half {
                (HPos::Right, -0.01)
            } else {
                (HPos::Left, 0.01)
            };
            let label = format!("observed T = {}", num(observed));
            let style = text_style(12.5, &OBSERVED, h, VPos::Center);
            chart
                .draw_series(std::iter::once(Text::new(
                    label,
                    (observed + nudge * (xhi - xlo), top * 0.94),
                    style,
                )))
                .map_err(err("observed label"))?;
        }
        Ok(())
    })
}

/// Largest number of dyads whose ids are written beside their points; more would overlap.
const MAX_POINT_LABELS: usize = 24;

/// Each dyad's real-pair value against the mean of its members' pseudo-pairs, with the line
/// of equality: points above it are dyads whose real pair exceeds their pseudo-pairs. Filled
/// markers lie above the line and open ones below, so the split does not rest on colour.
pub fn paired_svg(dyads: &[(String, f64, f64)], title: &str) -> String {
    let size = (560, 360);
    let shown: Vec<&(String, f64, f64)> = dyads
        .iter()
        .filter(|(_, real, pseudo)| real.is_finite() && pseudo.is_finite())
        .collect();
    if shown.is_empty() {
        return message_svg(size, "no dyad has both a real and a pseudo-pair value");
    }
    let (lo, hi) = padded_range(shown.iter().flat_map(|d| [d.1, d.2]), 0.08);
    let axis_desc = text_style(13.0, &INK, HPos::Center, VPos::Center);
    let tick = text_style(11.5, &INK, HPos::Center, VPos::Top);
    let label_ids = shown.len() <= MAX_POINT_LABELS;

    canvas(size, |root| {
        let mut chart = ChartBuilder::on(root)
            .caption(title, font(14.0))
            .margin(12)
            .margin_right(20)
            .x_label_area_size(46)
            .y_label_area_size(58)
            .build_cartesian_2d(lo..hi, lo..hi)
            .map_err(err("paired axes"))?;
        chart
            .configure_mesh()
            .light_line_style(WHITE)
            .bold_line_style(GRID)
            .axis_style(INK)
            .x_labels(6)
            .y_labels(6)
            .label_style(tick)
            .axis_desc_style(axis_desc)
            .x_label_formatter(&|v| num(*v))
            .y_label_formatter(&|v| num(*v))
            .x_desc("mean of the dyad's pseudo-pairs")
            .y_desc("real pair")
            .draw()
            .map_err(err("paired mesh"))?;
        chart
            .draw_series(DashedLineSeries::new(
                [(lo, lo), (hi, hi)],
                6,
                4,
                MUTED.stroke_width(1),
            ))
            .map_err(err("identity line"))?;
        let note = text_style(11.5, &MUTED, HPos::Right, VPos::Bottom);
        chart
            .draw_series(std::iter::once(Text::new(
                "real = pseudo",
                (hi - 0.02 * (hi - lo), hi - 0.08 * (hi - lo)),
                note,
            )))
            .map_err(err("identity label"))?;
        chart
            .draw_series(shown.iter().map(|(_, real, pseudo)| {
                let style = if real > pseudo {
                    POINT.filled()
                } else {
                    POINT.stroke_width(2)
                };
                Circle::new((*pseudo, *real), 4, style)
            }))
            .map_err(err("dyad points"))?;
        if label_ids {
            let id_style = text_style(10.5, &MUTED, HPos::Left, VPos::Center);
            chart
                .draw_series(shown.iter().map(|(id, real, pseudo)| {
                    Text::new(
                        id.clone(),
                        (*pseudo + 0.015 * (hi - lo), *real),
                        id_style.clone(),
                    )
                }))
                .map_err(err("dyad labels"))?;
        }
        Ok(())
    })
}

/// Longest member label written in full; longer ones are cut with an ellipsis so that one
/// odd id cannot push the matrix off the page.
const MAX_LABEL_CHARS: usize = 24;

fn short(label: &str) -> String {
    if label.chars().count() <= MAX_LABEL_CHARS {
        label.to_owned()
    } else {
        let cut: String = label.chars().take(MAX_LABEL_CHARS - 1).collect();
        format!("{cut}…")
    }
}

/// Layout of the heatmap in pixels, derived from the matrix size.
struct Grid {
    rows: usize,
    cols: usize,
    cell: i32,
    left: i32,
    top: i32,
    label_px: f64,
    /// Only every `label_step`-th row and column is labelled when cells are small.
    label_step: usize,
}

impl Grid {
    fn new(m: &MatrixPlot) -> Grid {
        let rows = m.row_labels.len().max(1);
        let cols = m.col_labels.len().max(1);
        let cell = (560 / rows.max(cols)).clamp(6, 30) as i32;
        let label_px = (f64::from(cell) - 2.0).clamp(8.0, 12.0);
        let label_step = ((9.0 / f64::from(cell)).ceil() as usize).max(1);
        let longest =
            |labels: &[String]| labels.iter().map(|l| l.chars().count()).max().unwrap_or(1);
        // 0.58 em per character: an average sans-serif advance, slightly generous.
        let text_len = |n: usize| (n.min(MAX_LABEL_CHARS) as f64 * label_px * 0.58).ceil() as i32;
        // Room for the axis description (30 px) plus the longest label.
        let left = 30 + text_len(longest(&m.row_labels)) + 8;
        let top = 52 + text_len(longest(&m.col_labels)) + 8;
        Grid {
            rows,
            cols,
            cell,
            left,
            top,
            label_px,
            label_step,
        }
    }

    fn x(&self, c: usize) -> i32 {
        self.left + self.cell * c as i32
    }

    fn y(&self, r: usize) -> i32 {
        self.top + self.cell * r as i32
    }

    fn right(&self) -> i32 {
        self.x(self.cols)
    }

    fn bottom(&self) -> i32 {
        self.y(self.rows)
    }
}

/// The outline of a real pair: a 2-px dark square with a 1-px white one inside, so that it
/// shows on the lightest and the darkest fill alike. Drawn as closed paths because the SVG
/// backend writes rectangles without a stroke width.
fn outline(
    root: &DrawingArea<SVGBackend<'_>, Shift>,
    (x0, y0): (i32, i32),
    (x1, y1): (i32, i32),
) -> Result<(), String> {
    let square = |a: i32, b: i32, c: i32, d: i32| vec![(a, b), (c, b), (c, d), (a, d), (a, b)];
    root.draw(&PathElement::new(
        square(x0, y0, x1, y1),
        INK.stroke_width(2),
    ))
    .map_err(err("real pair outline"))?;
    if x1 - x0 > 8 {
        root.draw(&PathElement::new(
            square(x0 + 2, y0 + 2, x1 - 2, y1 - 2),
            WHITE.stroke_width(1),
        ))
        .map_err(err("real pair outline"))?;
    }
    Ok(())
}

/// Draws the hatching of an excluded cell: diagonal strokes clipped to the square.
fn hatch(
    root: &DrawingArea<SVGBackend<'_>, Shift>,
    (x0, y0): (i32, i32),
    s: i32,
) -> Result<(), String> {
    let style = HATCH.stroke_width(1);
    let step = (s / 3).max(3);
    let mut k = step;
    while k < 2 * s {
        let (a, b) = if k <= s {
            ((x0, y0 + k), (x0 + k, y0))
        } else {
            ((x0 + k - s, y0 + s), (x0 + s, y0 + k - s))
        };
        root.draw(&PathElement::new(vec![a, b], style))
            .map_err(err("hatching"))?;
        k += step;
    }
    root.draw(&Rectangle::new(
        [(x0, y0), (x0 + s, y0 + s)],
        GRID.stroke_width(1),
    ))
    .map_err(err("hatching border"))
}

/// The candidate-pair matrix of one cell: colour is the pair's synchrony on a sequential
/// scale, real pairs are outlined, excluded candidates are hatched with no colour.
pub fn heatmap_svg(m: &MatrixPlot) -> String {
    let g = Grid::new(m);
    let cells = g.rows * g.cols;
    let value = |r: usize, c: usize| m.values.get((r, c)).copied().unwrap_or(f64::NAN);
    let status = |r: usize, c: usize| m.status.get((r, c)).copied().unwrap_or(0);
    let (vmin, vmax) = (0..cells)
        .map(|i| (i / g.cols.max(1), i % g.cols.max(1)))
        .filter(|&(r, c)| status(r, c) != 0)
        .map(|(r, c)| value(r, c))
        .filter(|v| v.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
            (a.min(v), b.max(v))
        });
    let has_values = vmin.is_finite();
    let scale = |v: f64| {
        if vmax > vmin {
            (v - vmin) / (vmax - vmin)
        } else {
            0.5
        }
    };
    let bar_x = g.right() + 28;
    let legend_y = g.bottom() + 46;
    let width = (bar_x + 90).max(g.left + 470) as u32;
    let height = (legend_y + 34).max(g.top + 200) as u32;

    canvas((width, height), |root| {
        let title = text_style(14.0, &INK, HPos::Left, VPos::Top);
        root.draw_text(&m.label, &title, (10, 8))
            .map_err(err("heatmap title"))?;
        for r in 0..g.rows {
            for c in 0..g.cols {
                let (x0, y0) = (g.x(c), g.y(r));
                let v = value(r, c);
                match status(r, c) {
                    0 => hatch(root, (x0, y0), g.cell)?,
                    _ if v.is_finite() => root
                        .draw(&Rectangle::new(
                            [(x0, y0), (x0 + g.cell, y0 + g.cell)],
                            ramp(scale(v)).filled(),
                        ))
                        .map_err(err("heatmap cell"))?,
                    _ => {
                        root.draw(&Rectangle::new(
                            [(x0, y0), (x0 + g.cell, y0 + g.cell)],
                            GRID.stroke_width(1),
                        ))
                        .map_err(err("empty cell"))?;
                        root.draw(&Circle::new(
                            (x0 + g.cell / 2, y0 + g.cell / 2),
                            (g.cell / 8).max(1),
                            MUTED.filled(),
                        ))
                        .map_err(err("empty cell mark"))?;
                    }
                }
            }
        }
        // Real pairs last, so their outlines sit on top of the neighbouring fills.
        for r in 0..g.rows {
            for c in 0..g.cols {
                if status(r, c) == 2 {
                    let (x0, y0) = (g.x(c), g.y(r));
                    outline(root, (x0 + 1, y0 + 1), (x0 + g.cell - 1, y0 + g.cell - 1))?;
                }
            }
        }
        root.draw(&Rectangle::new(
            [(g.left, g.top), (g.right(), g.bottom())],
            INK.stroke_width(1),
        ))
        .map_err(err("heatmap frame"))?;

        let row_style = text_style(g.label_px, &INK, HPos::Right, VPos::Center);
        for (r, label) in m.row_labels.iter().enumerate().step_by(g.label_step) {
            root.draw_text(&short(label), &row_style, (g.left - 4, g.y(r) + g.cell / 2))
                .map_err(err("row label"))?;
        }
        let col_style = TextStyle::from(font(g.label_px).transform(FontTransform::Rotate270))
            .color(&INK)
            .pos(Pos::new(HPos::Left, VPos::Center));
        for (c, label) in m.col_labels.iter().enumerate().step_by(g.label_step) {
            root.draw_text(&short(label), &col_style, (g.x(c) + g.cell / 2, g.top - 4))
                .map_err(err("column label"))?;
        }
        let desc = text_style(12.5, &MUTED, HPos::Center, VPos::Center);
        let row_desc = TextStyle::from(font(12.5).transform(FontTransform::Rotate270))
            .color(&MUTED)
            .pos(Pos::new(HPos::Center, VPos::Center));
        root.draw_text("row member", &row_desc, (14, (g.top + g.bottom()) / 2))
            .map_err(err("row description"))?;
        root.draw_text("column member", &desc, ((g.left + g.right()) / 2, 40))
            .map_err(err("column description"))?;

        if has_values {
            colour_bar(
                root,
                (bar_x, g.top),
                (g.bottom() - g.top).max(120),
                vmin,
                vmax,
            )?;
        }
        legend(root, (g.left, legend_y))
    })
}

/// Vertical colour scale beside the matrix, with its extremes and midpoint labelled.
fn colour_bar(
    root: &DrawingArea<SVGBackend<'_>, Shift>,
    (x, y): (i32, i32),
    height: i32,
    vmin: f64,
    vmax: f64,
) -> Result<(), String> {
    let steps = 64;
    let w = 14;
    for k in 0..steps {
        // Top of the bar is the largest value.
        let t = 1.0 - (f64::from(k) + 0.5) / f64::from(steps);
        let y0 = y + height * k / steps;
        let y1 = y + height * (k + 1) / steps;
        root.draw(&Rectangle::new([(x, y0), (x + w, y1)], ramp(t).filled()))
            .map_err(err("colour bar"))?;
    }
    root.draw(&Rectangle::new(
        [(x, y), (x + w, y + height)],
        INK.stroke_width(1),
    ))
    .map_err(err("colour bar frame"))?;
    let tick = text_style(11.0, &INK, HPos::Left, VPos::Center);
    let marks = [(vmax, 0), ((vmin + vmax) / 2.0, height / 2), (vmin, height)];
    for (v, dy) in marks {
        root.draw(&PathElement::new(
            vec![(x + w, y + dy), (x + w + 4, y + dy)],
            INK.stroke_width(1),
        ))
        .map_err(err("colour bar tick"))?;
        root.draw_text(&num(v), &tick, (x + w + 6, y + dy))
            .map_err(err("colour bar label"))?;
    }
    let caption = text_style(11.0, &MUTED, HPos::Left, VPos::Bottom);
    root.draw_text("synchrony", &caption, (x - 4, y - 12))
        .map_err(err("colour bar caption"))
}

/// Key to the three non-colour encodings: outline, hatching, dot.
fn legend(root: &DrawingArea<SVGBackend<'_>, Shift>, (x, y): (i32, i32)) -> Result<(), String> {
    let s = 14;
    let label = text_style(12.0, &INK, HPos::Left, VPos::Center);
    let mid = ramp(0.5);
    root.draw(&Rectangle::new([(x, y), (x + s, y + s)], mid.filled()))
        .map_err(err("legend"))?;
    outline(root, (x + 1, y + 1), (x + s - 1, y + s - 1))?;
    root.draw_text("real pair (outlined)", &label, (x + s + 6, y + s / 2))
        .map_err(err("legend"))?;
    let x2 = x + 170;
    hatch(root, (x2, y), s)?;
    root.draw_text("excluded candidate", &label, (x2 + s + 6, y + s / 2))
        .map_err(err("legend"))?;
    let x3 = x2 + 160;
    root.draw(&Rectangle::new(
        [(x3, y), (x3 + s, y + s)],
        GRID.stroke_width(1),
    ))
    .map_err(err("legend"))?;
    root.draw(&Circle::new((x3 + s / 2, y + s / 2), 2, MUTED.filled()))
        .map_err(err("legend"))?;
    root.draw_text("no value", &label, (x3 + s + 6, y + s / 2))
        .map_err(err("legend"))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn matrix() -> MatrixPlot {
        MatrixPlot {
            label: "task <hbo> & co".into(),
            row_labels: vec!["m<1>".into(), "m2".into(), "m3".into()],
            col_labels: vec!["p1".into(), "p&2".into(), "p3".into()],
            values: ndarray::Array2::from_shape_vec(
                (3, 3),
                vec![0.5, 0.2, f64::NAN, 0.1, 0.6, 0.3, 0.25, 0.15, 0.7],
            )
            .unwrap(),
            status: ndarray::Array2::from_shape_vec((3, 3), vec![2, 1, 1, 0, 2, 1, 1, 1, 2])
                .unwrap(),
        }
    }

    // Source: the SVG 1.1 text content model: character data in <text> must have `<` and `&`
    // escaped, so a raw label with markup would become an element.
    #[test]
    fn svg_text_is_escaped_once() {
        let svg = histogram_svg(&[0.1, 0.2, 0.3], 0.25, "a<b>&c");
        assert!(svg.contains("a&lt;b&gt;&amp;c"), "{svg}");
        assert!(!svg.contains("a<b>"));
        assert!(!svg.contains("&amp;lt;"));
        let dy = vec![("<script>x</script>".to_string(), 0.4, 0.2)];
        let svg = paired_svg(&dy, "t");
        assert!(svg.contains("&lt;script&gt;x&lt;/script&gt;"));
        assert!(!svg.contains("<script"));
        let svg = heatmap_svg(&matrix());
        assert!(svg.contains("m&lt;1&gt;") && svg.contains("p&amp;2"));
        assert!(svg.contains("task &lt;hbo&gt; &amp; co"));
    }

    #[test]
    fn long_labels_are_cut() {
        assert_eq!(short("m1"), "m1");
        let long = "x".repeat(40);
        let cut = short(&long);
        assert_eq!(cut.chars().count(), MAX_LABEL_CHARS);
        assert!(cut.ends_with('…'));
    }

    #[test]
    fn histogram_draws_every_value_in_some_bar() {
        let null: Vec<f64> = (0..100).map(|i| f64::from(i) / 100.0).collect();
        let bins = bin_count(null.len());
        assert_eq!(bins, 10);
        let svg = histogram_svg(&null, 0.95, "t");
        // 10 non-empty bins → 10 bar rectangles filled with the bar colour.
        assert_eq!(svg.matches("fill=\"#9DB4CC\"").count(), 10, "{svg}");
        assert!(svg.contains("observed T = 0.95"));
    }

    #[test]
    fn empty_inputs_give_a_message_not_a_panic() {
        assert!(histogram_svg(&[], 1.0, "t").contains("no re-pairing"));
        assert!(histogram_svg(&[f64::NAN], f64::NAN, "t").contains("<svg"));
        let d = vec![("d1".to_string(), f64::NAN, 0.3)];
        assert!(paired_svg(&d, "t").contains("no dyad"));
        let m = MatrixPlot {
            label: "empty".into(),
            row_labels: vec![],
            col_labels: vec![],
            values: ndarray::Array2::zeros((0, 0)),
            status: ndarray::Array2::zeros((0, 0)),
        };
        assert!(heatmap_svg(&m).contains("<svg"));
    }

    #[test]
    fn paired_markers_split_by_the_identity_line() {
        let d = vec![
            ("above".to_string(), 0.6, 0.3),
            ("below".to_string(), 0.2, 0.4),
            ("gone".to_string(), f64::NAN, 0.4),
        ];
        let svg = paired_svg(&d, "t");
        assert_eq!(svg.matches("<circle").count(), 2);
        assert!(svg.contains("above") && svg.contains("below") && !svg.contains("gone"));
    }

    #[test]
    fn heatmap_marks_real_and_excluded_cells() {
        let svg = heatmap_svg(&matrix());
        let outline = "stroke=\"#222222\" stroke-width=\"2\"";
        // 3 real pairs + the legend sample.
        assert_eq!(svg.matches(outline).count(), 4, "{svg}");
        // One excluded cell + the legend sample, each hatched with several strokes.
        assert!(svg.matches("stroke=\"#9A9A9A\"").count() >= 2 * 3);
    }

    // Lightness must fall monotonically along a sequential scale (relative luminance,
    // ITU-R BT.709 weights on the gamma-encoded values as a close enough proxy).
    #[test]
    fn ramp_darkens_monotonically() {
        let lum = |c: RGBColor| {
            0.2126 * f64::from(c.0) + 0.7152 * f64::from(c.1) + 0.0722 * f64::from(c.2)
        };
        let mut prev = f64::INFINITY;
        for k in 0..=100 {
            let l = lum(ramp(f64::from(k) / 100.0));
            assert!(l < prev, "step {k}");
            prev = l;
        }
        assert_eq!(ramp(f64::NAN), ramp(0.0));
    }

    #[test]
    fn figures_are_deterministic() {
        let null: Vec<f64> = (0..500).map(|i| (f64::from(i) * 0.37).sin()).collect();
        assert_eq!(
            histogram_svg(&null, 0.2, "x"),
            histogram_svg(&null, 0.2, "x")
        );
        assert_eq!(heatmap_svg(&matrix()), heatmap_svg(&matrix()));
    }
}
