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
    /// Group heading drawn before the item ("'front-rotors':"); empty when the item is not
    /// the first of a group.
    pub(super) heading: String,
}

impl LegendItem {
    pub(super) fn new(swatch: Swatch, text: String) -> LegendItem {
        LegendItem {
            swatch,
            text,
            heading: String::new(),
        }
    }
}

/// The group of a label: a leading quoted name (`'front-rotors' thrust` is in group
/// `'front-rotors'` with the text `thrust`), else none.
pub(super) fn label_group(label: &str) -> Option<(&str, &str)> {
    let rest = label.strip_prefix('\'')?;
    let end = rest.find('\'')? + 1;
    let (group, text) = label.split_at(end + 1);
    let text = text.strip_prefix(' ')?;
    (!text.is_empty()).then_some((group, text))
}

/// Merge runs of consecutive items of one group: the first carries the heading, every item
/// keeps only its own text, so `'front' thrust, 'front' available` reads
/// `'front': thrust, available` on one stretch of the strip.
pub(super) fn group_items(items: Vec<LegendItem>) -> Vec<LegendItem> {
    let groups: Vec<Option<String>> = items
        .iter()
        .map(|it| label_group(&it.text).map(|(g, _)| g.to_string()))
        .collect();
    let mut out = Vec::with_capacity(items.len());
    for (k, mut it) in items.into_iter().enumerate() {
        let Some(g) = &groups[k] else {
            out.push(it);
            continue;
        };
        let before = k > 0 && groups[k - 1].as_ref() == Some(g);
        let after = groups.get(k + 1).is_some_and(|n| n.as_ref() == Some(g));
        if before || after {
            let text = label_group(&it.text)
                .map(|(_, t)| t.to_string())
                .unwrap_or_default();
            if !before {
                it.heading = format!("{g}:");
            }
            it.text = text;
        }
        out.push(it);
    }
    out
}

/// Whether two series draw the same line: the same finite points, to a part in 1e9 of their
/// size (a later one hides the earlier).
pub(super) fn same_line(a: &Series, b: &Series) -> bool {
    let pts = |s: &Series| -> Vec<(f64, f64)> {
        s.x.iter()
            .zip(&s.y)
            .filter(|(x, y)| x.is_finite() && y.is_finite())
            .map(|(x, y)| (*x, *y))
            .collect()
    };
    let (p, q) = (pts(a), pts(b));
    if p.is_empty() || p.len() != q.len() {
        return false;
    }
    let scale = p.iter().map(|v| v.1.abs()).fold(1e-12, f64::max);
    p.iter()
        .zip(&q)
        .all(|(u, v)| u.0 == v.0 && (u.1 - v.1).abs() <= 1e-9 * scale)
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
    for (k, s) in p.series.iter().enumerate() {
        if !s.label.is_empty() {
            let any =
                s.x.iter()
                    .zip(&s.y)
                    .any(|(a, b)| a.is_finite() && b.is_finite());
            // A line drawn exactly over an earlier one hides it: say so in the legend.
            let hides = p.series[..k]
                .iter()
                .find(|e| !e.label.is_empty() && same_line(e, s));
            let text = match (any, hides) {
                (false, _) => format!("{} (no points)", s.label),
                (true, Some(e)) => format!("{} (same as {}, drawn over it)", s.label, e.label),
                (true, None) => s.label.clone(),
            };
            items.push(LegendItem::new(Swatch::Line(s.style, LINE_WIDTH), text));
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
            items.push(LegendItem::new(Swatch::Line(h.style, REF_LINE_WIDTH), text));
        }
    }
    for v in &p.vlines {
        if !v.label.is_empty() {
            items.push(LegendItem::new(
                Swatch::Line(v.style, REF_LINE_WIDTH),
                v.label.clone(),
            ));
        }
    }
    let labels = shade_labels(&p.shades);
    for l in labels.iter().filter(|l| !l.is_empty()) {
        items.push(LegendItem::new(
            Swatch::Fill(shade_colour(&labels, l), SHADE_ALPHA),
            l.clone(),
        ));
    }
    group_items(items)
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
        let hw = if it.heading.is_empty() {
            0
        } else {
            area.estimate_text_size(&it.heading, &bold(LEGEND_PX))?.0 as i32 + 8
        };
        let w = hw + SWATCH_W + 8 + tw as i32 + if it.heading.is_empty() { 26 } else { 18 };
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
    let head = bold(LEGEND_PX).pos(Pos::new(HPos::Left, VPos::Center));
    for (it, &(x, y)) in items.iter().zip(pos) {
        let yc = y + LEGEND_ROW as i32 / 2;
        let x = if it.heading.is_empty() {
            x
        } else {
            area.draw(&Text::new(it.heading.clone(), (x, yc), head.clone()))?;
            x + area.estimate_text_size(&it.heading, &bold(LEGEND_PX))?.0 as i32 + 8
        };
        draw_swatch(area, &it.swatch, x, yc)?;
        area.draw(&Text::new(
            it.text.clone(),
            (x + SWATCH_W + 8, yc),
            style.clone(),
        ))?;
    }
    Ok(())
}
