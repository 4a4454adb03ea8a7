//! Scatter of points coloured by a scalar, with reference lines and curves over it.

use super::*;

/// Scatter of `points` = (x, y, value), each coloured by its value on the ramp of
/// [`value_colour`] with a colour bar labelled `value_label`; points with a non-finite value
/// are grey. `overlay` adds curves and reference lines. Writes `<stem>.png` and `<stem>.svg`.
pub fn render_scatter(
    path_stem: &Path,
    title: &str,
    x_label: &str,
    y_label: &str,
    points: &[(f64, f64, f64)],
    value_label: &str,
    overlay: &Overlay,
) -> Result<Vec<PathBuf>, WriteError> {
    let fig = Figure::Scatter {
        title,
        x_label,
        y_label,
        points,
        value_label,
        overlay,
    };
    write_both(path_stem, (1400, 900), &fig)
}

pub(super) fn overlay_panel(x_label: &str, y_label: &str, o: &Overlay) -> Panel {
    Panel {
        title: String::new(),
        x_label: x_label.to_string(),
        y_label: y_label.to_string(),
        series: o.series.clone(),
        shades: o.shades.clone(),
        hlines: o.hlines.clone(),
        vlines: o.vlines.clone(),
        x_range: o.x_range,
        y_range: o.y_range,
        x_tick_step: None,
    }
}

pub(super) fn draw_scatter<DB: DrawingBackend>(
    body: &DrawingArea<DB, Shift>,
    x_label: &str,
    y_label: &str,
    points: &[(f64, f64, f64)],
    value_label: &str,
    overlay: &Overlay,
) -> Res<DB> {
    let (w, _) = body.dim_in_pixel();
    let (main, bar) = body.split_horizontally(w.saturating_sub(COLOUR_BAR_WIDTH));
    let p = overlay_panel(x_label, y_label, overlay);
    let shown: Vec<(f64, f64, f64)> = points
        .iter()
        .copied()
        .filter(|q| q.0.is_finite() && q.1.is_finite())
        .collect();
    let vr = settle(
        finite_extent(shown.iter().map(|q| q.2)).unwrap_or((0.0, 1.0)),
        false,
    );
    let grey = shown.iter().any(|q| !q.2.is_finite());
    let extra_legend = if grey {
        vec![LegendItem::new(
            Swatch::Marker(NO_VALUE_GREY),
            "no value".into(),
        )]
    } else {
        Vec::new()
    };
    let xy: Vec<(f64, f64)> = shown.iter().map(|q| (q.0, q.1)).collect();
    let pts = shown.clone();
    let legend_h = draw_panel(&main, &p, &xy, false, extra_legend, move |chart| {
        let xr = chart.x_range();
        let yr = chart.y_range();
        let inside = pts
            .into_iter()
            .filter(move |q| q.0 >= xr.start && q.0 <= xr.end && q.1 >= yr.start && q.1 <= yr.end);
        let pts: Vec<_> = inside.collect();
        chart.draw_series(pts.iter().map(|q| {
            let t = (q.2 - vr.0) / (vr.1 - vr.0);
            Circle::new((q.0, q.1), 6, value_colour(t).filled())
        }))?;
        chart.draw_series(
            pts.iter()
                .map(|q| Circle::new((q.0, q.1), 6, RGBColor(40, 40, 40).stroke_width(1))),
        )?;
        Ok(())
    })?;
    draw_colour_bar(
        &bar,
        vr,
        value_label,
        legend_h,
        |v| value_colour((v - vr.0) / (vr.1 - vr.0)),
        &[],
    )
}
