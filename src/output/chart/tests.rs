//! Checks of the chart kit: files, gaps, clipping, ticks, styles, maps.

use super::*;

fn temp_dir(tag: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("hoverline-chart-{tag}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    d
}

#[test]
fn renders_png_and_svg_with_title_text() {
    let dir = temp_dir("grid");
    let x: Vec<f64> = (0..=20).map(f64::from).collect();
    let mut y: Vec<f64> = x.iter().map(|v| v * v).collect();
    y[7] = f64::NAN;
    let panel = Panel {
        title: "square".into(),
        x_label: "speed (m/s)".into(),
        y_label: "value (-)".into(),
        series: vec![Series {
            label: "x squared".into(),
            x: x.clone(),
            y,
            style: 1,
        }],
        shades: vec![Shade {
            from: 3.0,
            to: 5.0,
            label: "unsafe band".into(),
        }],
        hlines: vec![HLine {
            y: 100.0,
            label: "threshold".into(),
            style: 5,
        }],
        ..Panel::default()
    };
    let files = render(
        &dir.join("demo"),
        "Demo chart title",
        &[panel.clone(), panel],
        2,
    )
    .expect("chart renders");
    assert_eq!(files.len(), 2);
    for f in &files {
        assert!(f.exists(), "{} missing", f.display());
        assert!(std::fs::metadata(f).unwrap().len() > 1000);
    }
    let svg = std::fs::read_to_string(dir.join("demo.svg")).unwrap();
    assert!(svg.contains("Demo chart title"));
    assert!(svg.contains("speed (m/s)"));
    assert!(svg.contains(FOOTER));
    // PNG signature (PNG specification, ISO/IEC 15948, section 5.2).
    let png = std::fs::read(dir.join("demo.png")).unwrap();
    assert_eq!(&png[..8], &[0x89, b'P', b'N', b'G', 0x0D, 0x0A, 0x1A, 0x0A]);
    // No temporary file is left behind.
    let left: Vec<_> = std::fs::read_dir(&dir)
        .unwrap()
        .filter_map(|e| e.ok())
        .filter(|e| e.file_name().to_string_lossy().contains(".tmp"))
        .collect();
    assert!(left.is_empty());
    std::fs::remove_dir_all(&dir).unwrap();
}

#[test]
fn nan_breaks_the_line_instead_of_drawing_zero() {
    let b = Bounds {
        x0: 0.0,
        x1: 10.0,
        y0: -1.0,
        y1: 10.0,
    };
    let x = [0.0, 1.0, 2.0, 3.0, 4.0, 5.0, 6.0];
    let y = [1.0, 2.0, f64::NAN, 3.0, 4.0, f64::NAN, 5.0];
    let Runs { lines, lonely } = runs(&x, &y, &b);
    assert_eq!(
        lines,
        vec![vec![(0.0, 1.0), (1.0, 2.0)], vec![(3.0, 3.0), (4.0, 4.0)]]
    );
    assert_eq!(lonely, vec![(6.0, 5.0)]);
    assert!(lines.iter().flatten().all(|p| p.1 != 0.0));
}

#[test]
fn lines_leaving_the_range_are_clipped_at_its_edge() {
    let b = Bounds {
        x0: 0.0,
        x1: 10.0,
        y0: 0.0,
        y1: 1.0,
    };
    let lines = runs(&[0.0, 2.0, 4.0], &[0.5, 1.5, 0.5], &b).lines;
    assert_eq!(lines.len(), 2);
    assert_eq!(lines[0], vec![(0.0, 0.5), (1.0, 1.0)]);
    assert_eq!(lines[1], vec![(3.0, 1.0), (4.0, 0.5)]);
}

#[test]
fn ticks_are_round_multiples() {
    let (v, l) = ticks((-180.0, 180.0), Some(30.0), 8);
    assert_eq!(v.len(), 13);
    assert_eq!(l[0], "-180");
    assert_eq!(l[6], "0");
    let (v, l) = ticks((0.0, 1.0), None, 4);
    assert_eq!(v, vec![0.0, 0.25, 0.5, 0.75, 1.0]);
    assert_eq!(l[1], "0.25");
}

#[test]
fn styles_differ_in_colour_and_pattern() {
    for a in 0..24 {
        for b in (a + 1)..24 {
            assert!(style_colour(a) != style_colour(b) || style_dash(a) != style_dash(b));
        }
    }
    assert_eq!(style_colour(3), style_colour(11));
    assert_ne!(style_dash(3), style_dash(11));
}

#[test]
fn scatter_and_map_render() {
    let dir = temp_dir("scatter");
    let pts: Vec<(f64, f64, f64)> = (0..20)
        .map(|k| (-(k as f64) * 0.1, k as f64 * 0.3, k as f64))
        .collect();
    let o = Overlay {
        vlines: vec![VLine {
            x: 0.0,
            label: "zero".into(),
            style: 0,
        }],
        ..Overlay::default()
    };
    let f = render_scatter(
        &dir.join("sc"),
        "Scatter title",
        "re (1/s)",
        "im (rad/s)",
        &pts,
        "speed (m/s)",
        &o,
    )
    .unwrap();
    assert!(f.iter().all(|p| p.exists()));
    let x = [0.0, 5.0, 10.0];
    let y = [0.0, 45.0, 90.0];
    let v = vec![
        vec![None, Some(1.0), Some(2.0)],
        vec![Some(1.0), Some(3.0), None],
        vec![Some(0.5), Some(2.5), Some(4.0)],
    ];
    let f = render_map(
        &dir.join("map"),
        "Map title",
        "speed (m/s)",
        "tilt (deg)",
        &x,
        &y,
        &v,
        "margin (deg)",
        &[],
    )
    .unwrap();
    assert!(f.iter().all(|p| p.exists()));
    assert!(std::fs::read_to_string(dir.join("map.svg"))
        .unwrap()
        .contains("Map title"));
    let bad = render_map(&dir.join("bad"), "t", "x", "y", &x, &y, &v[..2], "v", &[]);
    assert!(bad.is_err());
    std::fs::remove_dir_all(&dir).unwrap();
}
