//! Legends: the items of a panel, their layout in the strip under the chart, and swatches.

use super::*;

// ---------------------------------------------------------------------------------------
// Legends

pub(super) enum Swatch {
    Line(usize, u32),
    Fill(RGBColor, f64),
    Marker(RGBColor),
}

pub(super) struct LegendItem {
    pub(super) swatch: Swatch,
    pub(super) text: String,
}

pub(super) const SWATCH_W: i32 = 40;

pub(super) fn shade_colour(labels: &[String], label: &str) -> RGBColor {
    let k = labels.iter().position(|l| l == label).unwrap_or(0);
    SHADE_COLOURS[k % SHADE_COLOURS.len()]
}

pub(super) fn shade_labels(shades: &[Shade]) -> Vec<String> {
    let mut out: Vec<String> = Vec::new();
    for s in shades {
        if !out.contains(&s.label) {
            out.push(s.label.clone());
        }
    }
    out
}

pub(super) fn legend_items(p: &Panel, y_range: (f64, f64)) -> Vec<LegendItem> {
    let mut items = Vec::new();
    for s in &p.series {
        if !s.label.is_empty() {
            let any =
                s.x.iter()
                    .zip(&s.y)
                    .any(|(a, b)| a.is_finite() && b.is_finite());
            let text = if any {
                s.label.clone()
            } else {
                format!("{} (no points)", s.label)
            };
            items.push(LegendItem {
                swatch: Swatch::Line(s.style, LINE_WIDTH),
                text,
            });
        }
    }
    for h in &p.hlines {
        if !h.label.is_empty() {
            let off = !(h.y >= y_range.0 && h.y <= y_range.1);
            let text = if off {
                format!("{} (off scale)", h.label)
            } else {
                h.label.clone()
            };
            items.push(LegendItem {
                swatch: Swatch::Line(h.style, REF_LINE_WIDTH),
                text,
            });
        }
    }
    for v in &p.vlines {
        if !v.label.is_empty() {
            items.push(LegendItem {
                swatch: Swatch::Line(v.style, REF_LINE_WIDTH),
                text: v.label.clone(),
            });
        }
    }
    let labels = shade_labels(&p.shades);
    for l in labels.iter().filter(|l| !l.is_empty()) {
        items.push(LegendItem {
            swatch: Swatch::Fill(shade_colour(&labels, l), SHADE_ALPHA),
            text: l.clone(),
        });
    }
    items
}

/// Where the legend items go in their strip.
pub(super) struct LegendLayout {
    /// Top-left corner (px) of each item.
    pub(super) pos: Vec<(i32, i32)>,
    /// Height of the strip (px).
    pub(super) height: u32,
}

/// Lay out the items in rows of width `width` starting at `left`.
pub(super) fn legend_layout<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    items: &[LegendItem],
    left: i32,
    width: i32,
) -> Result<LegendLayout, DrawingAreaErrorKind<DB::ErrorType>> {
    if items.is_empty() {
        return Ok(LegendLayout {
            pos: Vec::new(),
            height: 0,
        });
    }
    let style = font(LEGEND_PX);
    let mut pos = Vec::with_capacity(items.len());
    let (mut x, mut y) = (left, 4);
    for it in items {
        let (tw, _) = area.estimate_text_size(&it.text, &style)?;
        let w = SWATCH_W + 8 + tw as i32 + 26;
        if x > left && x + w > left + width {
            x = left;
            y += LEGEND_ROW as i32;
        }
        pos.push((x, y));
        x += w;
    }
    Ok(LegendLayout {
        pos,
        height: (y + LEGEND_ROW as i32 + 6) as u32,
    })
}

pub(super) fn draw_swatch<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    swatch: &Swatch,
    x: i32,
    yc: i32,
) -> Res<DB> {
    match *swatch {
        Swatch::Line(style, width) => {
            let c = style_colour(style);
            let s = c.stroke_width(width);
            match style_dash(style) {
                Dash::Solid => {
                    area.draw(&PathElement::new(vec![(x, yc), (x + SWATCH_W, yc)], s))?
                }
                Dash::Dashed => {
                    for a in [0, 16, 32] {
                        let b = (a + 10).min(SWATCH_W);
                        area.draw(&PathElement::new(vec![(x + a, yc), (x + b, yc)], s))?;
                    }
                }
                Dash::Dotted => {
                    for a in (2..SWATCH_W).step_by(8) {
                        area.draw(&Circle::new((x + a, yc), 2, c.filled()))?;
                    }
                }
            }
        }
        Swatch::Fill(c, alpha) => {
            area.draw(&Rectangle::new(
                [(x, yc - 8), (x + SWATCH_W, yc + 8)],
                c.mix(alpha).filled(),
            ))?;
            area.draw(&Rectangle::new(
                [(x, yc - 8), (x + SWATCH_W, yc + 8)],
                c.mix(0.6).stroke_width(1),
            ))?;
        }
        Swatch::Marker(c) => {
            area.draw(&Circle::new((x + SWATCH_W / 2, yc), 6, c.filled()))?;
            area.draw(&Circle::new(
                (x + SWATCH_W / 2, yc),
                6,
                BLACK.stroke_width(1),
            ))?;
        }
    }
    Ok(())
}

pub(super) fn draw_legend<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    items: &[LegendItem],
    pos: &[(i32, i32)],
) -> Res<DB> {
    let style = font(LEGEND_PX).pos(Pos::new(HPos::Left, VPos::Center));
    for (it, &(x, y)) in items.iter().zip(pos) {
        let yc = y + LEGEND_ROW as i32 / 2;
        draw_swatch(area, &it.swatch, x, yc)?;
        area.draw(&Text::new(
            it.text.clone(),
            (x + SWATCH_W + 8, yc),
            style.clone(),
        ))?;
    }
    Ok(())
}
