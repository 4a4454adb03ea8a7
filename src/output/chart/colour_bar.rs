//! The colour bar beside a scatter or a map.

use super::*;

/// Draw the bar for `range` aligned with the chart's plotting area (the chart's legend strip
/// height is `legend_h`), each value coloured by `colour`; `marks` are values drawn as black
/// lines across the bar (the inside/outside edge of a margin scale).
pub(super) fn draw_colour_bar<DB: DrawingBackend>(
    bar: &DrawingArea<DB, Shift>,
    range: (f64, f64),
    label: &str,
    legend_h: u32,
    colour: impl Fn(f64) -> RGBColor,
    marks: &[f64],
) -> Res<DB> {
    let (w, h) = bar.dim_in_pixel();
    let plot_h = h.saturating_sub(legend_h + X_LABEL_AREA + 2 * MARGIN);
    let (yt, yl) = ticks(range, None, (plot_h / 55).clamp(4, 10) as usize);
    let mut widest = 0;
    for l in &yl {
        widest = widest.max(bar.estimate_text_size(l, &font(TICK_PX))?.0);
    }
    // Bar 32 px wide, then tick marks, labels and the rotated value label.
    let label_area = widest + 16 + 40;
    let left = w.saturating_sub(32 + label_area + MARGIN).max(MARGIN);
    let mut chart = ChartBuilder::on(bar)
        .margin_top(MARGIN)
        .margin_bottom(MARGIN + legend_h)
        .margin_left(left)
        .margin_right(MARGIN)
        .x_label_area_size(X_LABEL_AREA)
        .right_y_label_area_size(label_area)
        .build_cartesian_2d(
            Axis::new((0.0, 1.0), Vec::new()),
            Axis::new(range, yt.clone()),
        )?;
    let fy = |v: &f64| label_of(&yt, &yl, *v);
    chart
        .configure_mesh()
        .disable_x_mesh()
        .disable_y_mesh()
        .disable_x_axis()
        .y_desc(label.to_string())
        .label_style(font(TICK_PX))
        .axis_desc_style(font(AXIS_DESC_PX))
        .set_all_tick_mark_size(6)
        .y_label_formatter(&fy)
        .draw()?;
    let n = 128;
    let span = range.1 - range.0;
    chart.draw_series((0..n).map(|k| {
        let a = range.0 + span * k as f64 / n as f64;
        let b = range.0 + span * (k + 1) as f64 / n as f64;
        Rectangle::new([(0.0, a), (1.0, b)], colour(0.5 * (a + b)).filled())
    }))?;
    for &m in marks.iter().filter(|m| **m > range.0 && **m < range.1) {
        chart.draw_series(std::iter::once(PathElement::new(
            vec![(0.0, m), (1.0, m)],
            BLACK.stroke_width(2),
        )))?;
    }
    chart.draw_series(std::iter::once(Rectangle::new(
        [(0.0, range.0), (1.0, range.1)],
        BLACK.stroke_width(1),
    )))?;
    Ok(())
}
