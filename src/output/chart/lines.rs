//! Panels of line series in a grid: the chart kind behind most figures.

use super::*;

/// Draw `panels` in a grid of `columns` columns (0 is taken as 1) under `title`, and write
/// `<stem>.png` and `<stem>.svg`. Returns both paths (PNG first).
pub fn render(
    path_stem: &Path,
    title: &str,
    panels: &[Panel],
    columns: usize,
) -> Result<Vec<PathBuf>, WriteError> {
    let columns = columns.max(1).min(panels.len().max(1));
    let rows = panels.len().div_ceil(columns).max(1);
    let width = if columns == 1 {
        1400
    } else {
        720 * columns as u32
    };
    let panel_w = width / columns as u32;
    let mut panel_h = ((panel_w as f64 * 0.64) as u32).clamp(440, 800);
    if rows > 1 {
        // Several rows of full-width panels: keep the page near 1400 x 1100.
        panel_h = panel_h.min(520);
    }
    let height = TITLE_STRIP + FOOTER_STRIP + rows as u32 * panel_h;
    let fig = Figure::Grid {
        title,
        panels,
        columns,
        rows,
    };
    write_both(path_stem, (width, height), &fig)
}

// ---------------------------------------------------------------------------------------
// Drawing lines on a chart

pub(super) fn draw_path<DB: DrawingBackend>(
    chart: &mut ChartContext<'_, DB, Coord2>,
    pts: Vec<(f64, f64)>,
    style: usize,
    width: u32,
) -> Res<DB> {
    let c = style_colour(style);
    let s = c.stroke_width(width);
    match style_dash(style) {
        Dash::Solid => {
            chart.draw_series(LineSeries::new(pts, s))?;
        }
        Dash::Dashed => {
            chart.draw_series(DashedLineSeries::new(pts, 12, 7, s))?;
        }
        Dash::Dotted => {
            let r = width.max(2);
            chart.draw_series(DottedLineSeries::new(pts, 0, 3 * r as i32 + 2, move |p| {
                Circle::new(p, r, c.filled())
            }))?;
        }
    }
    Ok(())
}

pub(super) fn draw_series_clipped<DB: DrawingBackend>(
    chart: &mut ChartContext<'_, DB, Coord2>,
    s: &Series,
    b: &Bounds,
) -> Res<DB> {
    let Runs { lines, lonely } = runs(&s.x, &s.y, b);
    for run in lines {
        draw_path(chart, run, s.style, LINE_WIDTH)?;
    }
    let c = style_colour(s.style);
    chart.draw_series(lonely.into_iter().map(|p| Circle::new(p, 4, c.filled())))?;
    Ok(())
}

/// Draw one panel (axes, shades, reference lines, series, legend) into `area`; `extra_pts`
/// widen the automatic range, `tight_x` keeps the automatic x range unpadded, `extra_legend`
/// is appended to the legend and `extra` draws more content after the shades and reference
/// lines, before the series. Returns the height of the legend strip under the chart (px).
pub(super) fn draw_panel<DB, F>(
    area: &DrawingArea<DB, Shift>,
    p: &Panel,
    extra_pts: &[(f64, f64)],
    tight_x: bool,
    extra_legend: Vec<LegendItem>,
    extra: F,
) -> Result<u32, DrawingAreaErrorKind<DB::ErrorType>>
where
    DB: DrawingBackend,
    F: FnOnce(&mut ChartContext<'_, DB, Coord2>) -> Res<DB>,
{
    let (w, h) = area.dim_in_pixel();
    let finite_pts = |s: &Series| {
        s.x.iter()
            .zip(&s.y)
            .filter(|(a, b)| a.is_finite() && b.is_finite())
            .map(|(a, b)| (*a, *b))
            .collect::<Vec<_>>()
    };
    let pts: Vec<(f64, f64)> = p
        .series
        .iter()
        .flat_map(finite_pts)
        .chain(extra_pts.iter().copied())
        .collect();
    let has_data = !pts.is_empty();
    let x_auto = finite_extent(
        pts.iter()
            .map(|q| q.0)
            .chain(p.vlines.iter().map(|v| v.x))
            .chain(p.shades.iter().flat_map(|s| [s.from, s.to])),
    );
    // A user range that is not finite is ignored; with a fixed x range only the points
    // inside it set the automatic y range.
    let fixed = |r: Option<(f64, f64)>| r.filter(|r| r.0.is_finite() && r.1.is_finite());
    let (x_fixed, y_fixed) = (fixed(p.x_range), fixed(p.y_range));
    let in_x = |x: f64| x_fixed.is_none_or(|r| x >= r.0.min(r.1) && x <= r.0.max(r.1));
    let y_auto = finite_extent(
        pts.iter()
            .filter(|q| in_x(q.0))
            .map(|q| q.1)
            .chain(p.hlines.iter().map(|l| l.y)),
    );
    let xr = settle(
        x_fixed.or(x_auto).unwrap_or((0.0, 1.0)),
        x_fixed.is_none() && !tight_x,
    );
    let yr = settle(y_fixed.or(y_auto).unwrap_or((0.0, 1.0)), y_fixed.is_none());

    let mut items = legend_items(p, yr);
    items.extend(extra_legend);

    // Y tick labels decide the left label area; measure them first.
    let caption_h = if p.title.is_empty() { 0 } else { 34 };
    let left_guess = 110;
    let legend_h = legend_layout(area, &items, left_guess, w as i32 - left_guess - 16)?.height;
    let plot_h = h.saturating_sub(legend_h + caption_h + X_LABEL_AREA + 2 * MARGIN);
    let (yt, yl) = ticks(yr, None, (plot_h / 55).clamp(4, 10) as usize);
    let tick_style = font(TICK_PX);
    let mut widest = 0;
    for l in &yl {
        widest = widest.max(area.estimate_text_size(l, &tick_style)?.0);
    }
    let y_area = widest + 16 + 34;
    let left = (MARGIN + y_area) as i32;
    let LegendLayout {
        pos,
        height: legend_h,
    } = legend_layout(area, &items, left, w as i32 - left - 16)?;
    let plot_w = w.saturating_sub(y_area + 3 * MARGIN);
    let (xt, xl) = ticks(xr, p.x_tick_step, (plot_w / 110).clamp(3, 8) as usize);

    let (chart_area, legend_area) = area.split_vertically(h.saturating_sub(legend_h));
    let mut b = ChartBuilder::on(&chart_area);
    b.margin(MARGIN)
        .margin_right(2 * MARGIN)
        .x_label_area_size(X_LABEL_AREA)
        .y_label_area_size(y_area);
    if !p.title.is_empty() {
        b.caption(&p.title, bold(PANEL_TITLE_PX));
    }
    let mut chart = b.build_cartesian_2d(Axis::new(xr, xt.clone()), Axis::new(yr, yt.clone()))?;
    let fx = |v: &f64| label_of(&xt, &xl, *v);
    let fy = |v: &f64| label_of(&yt, &yl, *v);
    chart
        .configure_mesh()
        .x_desc(p.x_label.clone())
        .y_desc(p.y_label.clone())
        .label_style(font(TICK_PX))
        .axis_desc_style(font(AXIS_DESC_PX))
        .bold_line_style(RGBColor(225, 225, 225).stroke_width(1))
        .light_line_style(TRANSPARENT)
        .axis_style(BLACK.stroke_width(1))
        .x_label_formatter(&fx)
        .y_label_formatter(&fy)
        .draw()?;

    let bounds = Bounds {
        x0: xr.0,
        x1: xr.1,
        y0: yr.0,
        y1: yr.1,
    };
    // Bands: at least 0.5 % of the axis wide, so a one-point band shows.
    let labels = shade_labels(&p.shades);
    let min_w = 0.005 * (xr.1 - xr.0);
    for s in &p.shades {
        if !(s.from.is_finite() && s.to.is_finite()) {
            continue;
        }
        let (mut a, mut c) = (s.from.min(s.to), s.from.max(s.to));
        if c - a < min_w {
            let m = 0.5 * (a + c);
            a = m - 0.5 * min_w;
            c = m + 0.5 * min_w;
        }
        let (a, c) = (a.max(xr.0), c.min(xr.1));
        if c <= a {
            continue;
        }
        let col = shade_colour(&labels, &s.label);
        chart.draw_series(std::iter::once(Rectangle::new(
            [(a, yr.0), (c, yr.1)],
            col.mix(SHADE_ALPHA).filled(),
        )))?;
    }
    for v in &p.vlines {
        if v.x.is_finite() && v.x >= xr.0 && v.x <= xr.1 {
            draw_path(
                &mut chart,
                vec![(v.x, yr.0), (v.x, yr.1)],
                v.style,
                REF_LINE_WIDTH,
            )?;
        }
    }
    for l in &p.hlines {
        if l.y.is_finite() && l.y >= yr.0 && l.y <= yr.1 {
            draw_path(
                &mut chart,
                vec![(xr.0, l.y), (xr.1, l.y)],
                l.style,
                REF_LINE_WIDTH,
            )?;
        }
    }
    extra(&mut chart)?;
    for s in &p.series {
        draw_series_clipped(&mut chart, s, &bounds)?;
    }
    if !has_data {
        chart.plotting_area().draw(&Text::new(
            "no points to plot".to_string(),
            (0.5 * (xr.0 + xr.1), 0.5 * (yr.0 + yr.1)),
            font(AXIS_DESC_PX)
                .color(&RGBColor(110, 110, 110))
                .pos(Pos::new(HPos::Center, VPos::Center)),
        ))?;
    }
    draw_legend(&legend_area, &items, &pos)?;
    Ok(legend_h)
}
