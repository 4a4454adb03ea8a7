//! Filled grid map (the corridor): cells coloured by the diverging margin scale, overlays on
//! top.

use super::*;

/// Filled grid map: cell (i, j) is centred on (`x[i]`, `y[j]`) and filled by the colour of
/// the normalised margin `value[i][j]` on the diverging scale of [`margin_colour`] (fixed
/// from [`MARGIN_SCALE_MIN`] to [`MARGIN_SCALE_MAX`], 0 and -1 marked on the colour bar)
/// (so `value` has one row per x value, each with one entry per y value); `None` cells
/// (not trimmable) are grey. Cell edges lie halfway between neighbours. `x` and `y` must be
/// finite and strictly increasing. `overlays` (boundaries, a schedule) are drawn on top.
/// Writes `<stem>.png` and `<stem>.svg`.
#[allow(clippy::too_many_arguments)]
pub fn render_map(
    path_stem: &Path,
    title: &str,
    x_label: &str,
    y_label: &str,
    x: &[f64],
    y: &[f64],
    value: &[Vec<Option<f64>>],
    value_label: &str,
    overlays: &[Series],
) -> Result<Vec<PathBuf>, WriteError> {
    let invalid = |msg: &str| WriteError {
        path: path_stem.to_path_buf(),
        source: std::io::Error::new(std::io::ErrorKind::InvalidInput, msg.to_string()),
    };
    let increasing = |v: &[f64]| {
        !v.is_empty() && v.iter().all(|a| a.is_finite()) && v.windows(2).all(|w| w[1] > w[0])
    };
    if !increasing(x) || !increasing(y) {
        return Err(invalid(
            "map grid axes must be finite and strictly increasing; hint: sort the grid values",
        ));
    }
    if value.len() != x.len() || value.iter().any(|r| r.len() != y.len()) {
        return Err(invalid(
            "map values do not match the grid; hint: give value[i][j] for every x[i] and y[j]",
        ));
    }
    let fig = Figure::Map {
        title,
        x_label,
        y_label,
        x,
        y,
        value,
        value_label,
        overlays,
    };
    write_both(path_stem, (1400, 900), &fig)
}

pub(super) fn edges(c: &[f64]) -> Vec<f64> {
    let n = c.len();
    if n == 1 {
        return vec![c[0] - 0.5, c[0] + 0.5];
    }
    let mut e = Vec::with_capacity(n + 1);
    e.push(c[0] - 0.5 * (c[1] - c[0]));
    for k in 1..n {
        e.push(0.5 * (c[k - 1] + c[k]));
    }
    e.push(c[n - 1] + 0.5 * (c[n - 1] - c[n - 2]));
    e
}

#[allow(clippy::too_many_arguments)]
pub(super) fn draw_map<DB: DrawingBackend>(
    body: &DrawingArea<DB, Shift>,
    x_label: &str,
    y_label: &str,
    x: &[f64],
    y: &[f64],
    value: &[Vec<Option<f64>>],
    value_label: &str,
    overlays: &[Series],
) -> Res<DB> {
    let (w, _) = body.dim_in_pixel();
    let (main, bar) = body.split_horizontally(w.saturating_sub(COLOUR_BAR_WIDTH));
    let ex = edges(x);
    let ey = edges(y);
    let overlay = Overlay {
        series: overlays.to_vec(),
        x_range: Some((ex[0], ex[ex.len() - 1])),
        y_range: Some((ey[0], ey[ey.len() - 1])),
        ..Overlay::default()
    };
    let p = overlay_panel(x_label, y_label, &overlay);
    let vr = (MARGIN_SCALE_MIN, MARGIN_SCALE_MAX);
    let grey = value
        .iter()
        .flatten()
        .any(|v| !v.is_some_and(|a| a.is_finite()));
    let extra_legend = if grey {
        vec![LegendItem::new(
            Swatch::Fill(NO_VALUE_GREY, 1.0),
            "not trimmable".into(),
        )]
    } else {
        Vec::new()
    };
    let centres: Vec<(f64, f64)> = x
        .iter()
        .flat_map(|&a| y.iter().map(move |&b| (a, b)))
        .collect();
    let legend_h = draw_panel(&main, &p, &centres, true, extra_legend, |chart| {
        let mut cells = Vec::with_capacity(x.len() * y.len());
        for (i, row) in value.iter().enumerate() {
            for (j, v) in row.iter().enumerate() {
                let colour = match v {
                    Some(a) if a.is_finite() => margin_colour(*a),
                    _ => NO_VALUE_GREY,
                };
                cells.push(Rectangle::new(
                    [(ex[i], ey[j]), (ex[i + 1], ey[j + 1])],
                    colour.filled(),
                ));
            }
        }
        chart.draw_series(cells)?;
        // A white halo under every overlay, so a black schedule stays visible on the darkest
        // cells and a coloured boundary on cells of its own hue.
        let (xr, yr) = (chart.x_range(), chart.y_range());
        let b = Bounds {
            x0: xr.start,
            x1: xr.end,
            y0: yr.start,
            y1: yr.end,
        };
        for s in overlays {
            for run in runs(&s.x, &s.y, &b).lines {
                chart.draw_series(LineSeries::new(run, WHITE.stroke_width(LINE_WIDTH + 4)))?;
            }
        }
        Ok(())
    })?;
    draw_colour_bar(&bar, vr, value_label, legend_h, margin_colour, &[0.0, -1.0])
}
