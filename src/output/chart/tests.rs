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

#[test]
fn each_role_has_its_own_line_code() {
    // Common practice, no source: two meanings must not share a colour and pattern, and no
    // data series may look like a threshold or a limit.
    let code = |s: usize| (style_colour(s), style_dash(s));
    for (i, a) in Role::ALL.iter().enumerate() {
        for b in &Role::ALL[i + 1..] {
            assert_ne!(
                code(a.style()),
                code(b.style()),
                "{a:?} and {b:?} look alike"
            );
        }
    }
    let vermillion = PALETTE[5];
    for r in [Role::Threshold, Role::ThresholdLow, Role::HardLimit] {
        assert_eq!(style_colour(r.style()), vermillion, "{r:?}");
    }
    for k in 0..18 {
        assert_ne!(style_colour(data_style(k)), vermillion, "data style {k}");
        assert_ne!(style_colour(partner_style(data_style(k))), vermillion);
        assert_eq!(
            style_colour(partner_style(data_style(k))),
            style_colour(data_style(k)),
            "a partner keeps its series' colour"
        );
        assert_ne!(
            style_dash(partner_style(data_style(k))),
            style_dash(data_style(k))
        );
    }
    // The two schedules: both black, solid for the built one, dashed for the one in use.
    assert_eq!(style_dash(Role::BuiltSchedule.style()), Dash::Solid);
    assert_eq!(style_dash(Role::ScheduleInUse.style()), Dash::Dashed);
}

#[test]
fn margin_scale_diverges_at_zero_and_reads_in_greyscale() {
    // Common practice, no source: a diverging scale centred on the threshold, warm outside,
    // cool inside, darker the farther from 0, with a lightness step at 0 so that inside
    // against outside shows without colour.
    let l = |m: f64| luminance(margin_colour(m));
    for m in [-0.05, -0.5, -1.0, -2.0, -3.0, -10.0] {
        let c = margin_colour(m);
        assert!(c.0 > c.2, "outside {m} is warm: {c:?}");
    }
    for m in [0.0, 0.5, 1.0, 2.0, 9.0] {
        let c = margin_colour(m);
        assert!(c.2 > c.0, "inside {m} is cool: {c:?}");
    }
    let outside = [-0.01, -0.5, -1.0, -1.5, -2.0, -2.5, -3.0];
    for w in outside.windows(2) {
        assert!(l(w[1]) < l(w[0]), "darker farther outside: {w:?}");
    }
    let inside = [0.0, 0.5, 1.0, 1.5, 2.0];
    for w in inside.windows(2) {
        assert!(l(w[1]) < l(w[0]), "darker farther inside: {w:?}");
    }
    assert!(
        l(0.0) - l(-0.01) > 0.15,
        "step at 0: {} {}",
        l(0.0),
        l(-0.01)
    );
    // The hard limit is clearly darker than just outside, and far outside darker still.
    assert!(l(-0.01) - l(-1.0) > 0.2);
    assert!(l(-1.0) - l(-3.0) > 0.1);
    assert_eq!(margin_colour(-30.0), margin_colour(MARGIN_SCALE_MIN));
    assert_eq!(margin_colour(f64::NAN), NO_VALUE_GREY);
}

#[test]
fn legend_groups_named_entries_and_marks_hidden_lines() {
    let line = |label: &str, y: [f64; 3], style: usize| Series {
        label: label.into(),
        x: vec![0.0, 1.0, 2.0],
        y: y.to_vec(),
        style,
    };
    let panel = Panel {
        series: vec![
            line("'front' thrust", [1.0, 2.0, 3.0], 0),
            line("'front' available", [5.0, 5.0, 4.0], 8),
            line("'rear' thrust", [1.0, 2.0, 3.0], 4),
            line("'rear' available", [6.0, 6.0, 6.0], 12),
            line("single", [0.0, 0.0, 0.0], 3),
        ],
        ..Panel::default()
    };
    let items = legend_items(&panel, (0.0, 10.0));
    let shown: Vec<(&str, &str)> = items
        .iter()
        .map(|i| (i.heading.as_str(), i.text.as_str()))
        .collect();
    assert_eq!(
        shown,
        vec![
            ("'front':", "thrust"),
            ("", "available"),
            ("'rear':", "thrust (same as 'front' thrust, drawn over it)"),
            ("", "available"),
            ("", "single"),
        ]
    );
    assert_eq!(label_group("'a b' c"), Some(("'a b'", "c")));
    assert_eq!(label_group("'a'"), None);
    assert_eq!(label_group("plain"), None);
}
