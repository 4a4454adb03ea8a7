//! A figure as a whole: what to draw, the title strip and footer, fonts, and the atomic
//! write of the SVG and PNG pair.

use super::*;

/// Register the embedded DejaVu Sans as "sans-serif" (once per process).
pub fn ensure_font() {
    static ONCE: Once = Once::new();
    ONCE.call_once(|| {
        // The embedded font is valid; a failure would surface as a drawing error naming it.
        let _ = plotters::style::register_font(FONT, FontStyle::Normal, dejavu::sans::regular());
        let _ = plotters::style::register_font(FONT, FontStyle::Bold, dejavu::sans::bold());
    });
}

/// What to draw; one enum so the same code serves both backends.
pub(super) enum Figure<'a> {
    Grid {
        title: &'a str,
        panels: &'a [Panel],
        columns: usize,
        rows: usize,
    },
    Scatter {
        title: &'a str,
        x_label: &'a str,
        y_label: &'a str,
        points: &'a [(f64, f64, f64)],
        value_label: &'a str,
        overlay: &'a Overlay,
    },
    Map {
        title: &'a str,
        x_label: &'a str,
        y_label: &'a str,
        x: &'a [f64],
        y: &'a [f64],
        value: &'a [Vec<Option<f64>>],
        value_label: &'a str,
        overlays: &'a [Series],
    },
}

pub(super) type Coord2 = Cartesian2d<Axis, Axis>;
pub(super) type Res<DB> = Result<(), DrawingAreaErrorKind<<DB as DrawingBackend>::ErrorType>>;

pub(super) fn with_ext(stem: &Path, ext: &str) -> PathBuf {
    let mut s: OsString = stem.as_os_str().to_owned();
    s.push(".");
    s.push(ext);
    PathBuf::from(s)
}

pub(super) fn draw_error(path: &Path, e: impl std::fmt::Display) -> WriteError {
    WriteError {
        path: path.to_path_buf(),
        source: std::io::Error::other(format!("drawing failed: {e}")),
    }
}

pub(super) fn write_both(
    stem: &Path,
    size: (u32, u32),
    fig: &Figure,
) -> Result<Vec<PathBuf>, WriteError> {
    ensure_font();
    let png = with_ext(stem, "png");
    let svg = with_ext(stem, "svg");
    let dir = stem
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    ensure_dir(dir)?;

    let mut text = String::new();
    {
        let root = SVGBackend::with_string(&mut text, size).into_drawing_area();
        fig.draw(&root).map_err(|e| draw_error(&svg, e))?;
        root.present().map_err(|e| draw_error(&svg, e))?;
    }
    write_atomic(&svg, text.as_bytes())?;

    // The bitmap encoder picks the format from the extension, so the temporary name ends in
    // .png; its random part keeps parallel renders apart.
    let name = png
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_default();
    // Reserve an unpredictable name exclusively; the encoder then writes our own file.
    let (tmp, reserved) =
        crate::output::files::create_temporary(dir, &name, "tmp.png").map_err(|source| {
            WriteError {
                path: png.clone(),
                source,
            }
        })?;
    drop(reserved);
    let drawn = {
        let root = BitMapBackend::new(&tmp, size).into_drawing_area();
        fig.draw(&root).and_then(|_| root.present())
    };
    if let Err(e) = drawn {
        let _ = std::fs::remove_file(&tmp);
        return Err(draw_error(&png, e));
    }
    std::fs::rename(&tmp, &png).map_err(|source| {
        let _ = std::fs::remove_file(&tmp);
        WriteError {
            path: png.clone(),
            source,
        }
    })?;
    Ok(vec![png, svg])
}

impl Figure<'_> {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Res<DB> {
        root.fill(&WHITE)?;
        let title = match self {
            Figure::Grid { title, .. }
            | Figure::Scatter { title, .. }
            | Figure::Map { title, .. } => *title,
        };
        let body = frame(root, title)?;
        match self {
            Figure::Grid {
                panels,
                columns,
                rows,
                ..
            } => {
                if panels.is_empty() {
                    return centre_note(&body, "nothing to plot");
                }
                let cells = body.split_evenly((*rows, *columns));
                for (p, area) in panels.iter().zip(cells.iter()) {
                    draw_panel(area, p, &[], true, Vec::new(), |_| Ok(()))?;
                }
                Ok(())
            }
            Figure::Scatter {
                x_label,
                y_label,
                points,
                value_label,
                overlay,
                ..
            } => draw_scatter(&body, x_label, y_label, points, value_label, overlay),
            Figure::Map {
                x_label,
                y_label,
                x,
                y,
                value,
                value_label,
                overlays,
                ..
            } => draw_map(&body, x_label, y_label, x, y, value, value_label, overlays),
        }
    }
}

pub(super) fn font(px: f64) -> TextStyle<'static> {
    TextStyle::from((FONT, px).into_font())
}

pub(super) fn bold(px: f64) -> TextStyle<'static> {
    TextStyle::from((FONT, px, FontStyle::Bold).into_font())
}

/// Draw the title strip and footer; return the area between them.
pub(super) fn frame<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    title: &str,
) -> Result<DrawingArea<DB, Shift>, DrawingAreaErrorKind<DB::ErrorType>> {
    let (w, h) = root.dim_in_pixel();
    let (top, rest) = root.split_vertically(TITLE_STRIP);
    let (body, foot) = rest.split_vertically(h.saturating_sub(TITLE_STRIP + FOOTER_STRIP));
    top.draw(&Text::new(
        title.to_string(),
        ((w / 2) as i32, (TITLE_STRIP / 2) as i32),
        bold(TITLE_PX).pos(Pos::new(HPos::Center, VPos::Center)),
    ))?;
    foot.draw(&Text::new(
        FOOTER.to_string(),
        (MARGIN as i32, (FOOTER_STRIP / 2) as i32),
        font(FOOTER_PX)
            .color(&RGBColor(90, 90, 90))
            .pos(Pos::new(HPos::Left, VPos::Center)),
    ))?;
    Ok(body)
}

pub(super) fn centre_note<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    note: &str,
) -> Res<DB> {
    let (w, h) = area.dim_in_pixel();
    area.draw(&Text::new(
        note.to_string(),
        ((w / 2) as i32, (h / 2) as i32),
        font(AXIS_DESC_PX)
            .color(&RGBColor(110, 110, 110))
            .pos(Pos::new(HPos::Center, VPos::Center)),
    ))?;
    Ok(())
}

// ---------------------------------------------------------------------------------------
