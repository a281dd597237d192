//! `dilata plot` and the figures `dilata run` draws at its end: the PNG files are real PNG
//! images of the expected size with something drawn on them, the SVG files are well-formed XML,
//! and the time axis of every figure covers the time range of the history it was drawn from
//! (read back from the SVG: the range attribute and the tick labels).

use std::path::Path;
use std::process::Command;

const FIGURE_STEMS: [&str; 4] = [
    "plot_concentration",
    "plot_stress",
    "plot_energy",
    "plot_step_size",
];

fn dilata(args: &[&str]) -> (bool, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_dilata"))
        .args(args)
        .output()
        .unwrap();
    (
        out.status.success(),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

/// The time column of a history file, read here independently of dilata-plot.
fn history_times(dir: &Path) -> Vec<f64> {
    let text = std::fs::read_to_string(dir.join("history.csv")).unwrap();
    let mut lines = text.lines();
    let header: Vec<&str> = lines.next().unwrap().split(',').collect();
    let at = header.iter().position(|h| *h == "time_s").unwrap();
    lines
        .filter(|l| !l.is_empty())
        .map(|l| l.split(',').nth(at).unwrap().parse().unwrap())
        .collect()
}

/// What an SVG figure says about its time axis: the declared range and the tick labels.
struct TimeAxis {
    range: (f64, f64),
    ticks: Vec<f64>,
}

fn read_svg(path: &Path) -> (String, TimeAxis) {
    let text = std::fs::read_to_string(path).unwrap();
    let doc = roxmltree::Document::parse(&text)
        .unwrap_or_else(|e| panic!("{} is not well-formed XML: {e}", path.display()));
    let root = doc.root_element();
    assert_eq!(root.tag_name().name(), "svg");
    let range: Vec<f64> = root
        .attribute(dilata_plot::SVG_TIME_RANGE_ATTRIBUTE)
        .expect("time range attribute")
        .split_whitespace()
        .map(|v| v.parse().unwrap())
        .collect();
    // Horizontal-axis tick labels: centred text hanging below the axis (text-anchor "middle",
    // dy "0.76em") that reads as a number. Titles and axis names do not read as numbers.
    let ticks: Vec<f64> = doc
        .descendants()
        .filter(|n| n.has_tag_name("text"))
        .filter(|n| {
            n.attribute("text-anchor") == Some("middle") && n.attribute("dy") == Some("0.76em")
        })
        .filter_map(|n| n.text().and_then(|t| t.trim().parse().ok()))
        .collect();
    let texts: Vec<String> = doc
        .descendants()
        .filter(|n| n.has_tag_name("text"))
        .filter_map(|n| n.text().map(|t| t.trim().to_string()))
        .collect();
    (
        texts.join("|"),
        TimeAxis {
            range: (range[0], range[1]),
            ticks,
        },
    )
}

/// The axis covers `[t0, t1]`, and its tick labels lie on it and spread over most of it.
fn assert_covers(name: &str, axis: &TimeAxis, (t0, t1): (f64, f64)) {
    let (a, b) = axis.range;
    let span = t1 - t0;
    assert!(
        a <= t0 && b >= t1,
        "{name}: axis {a}..{b} does not cover the history's {t0}..{t1}"
    );
    assert!(
        b - a <= 1.5 * span.max(t1.abs() * 1e-9),
        "{name}: axis {a}..{b} much wider than the history's {t0}..{t1}"
    );
    assert!(axis.ticks.len() >= 3, "{name}: ticks {:?}", axis.ticks);
    // Labels are rounded to a few digits: allow 1 % of the axis length.
    let slack = 0.01 * (b - a);
    for t in &axis.ticks {
        assert!(
            *t >= a - slack && *t <= b + slack,
            "{name}: tick {t} off the axis {a}..{b}"
        );
    }
    let lo = axis.ticks.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = axis.ticks.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    assert!(
        hi - lo >= 0.5 * (b - a),
        "{name}: ticks {lo}..{hi} cover less than half of the axis {a}..{b}"
    );
}

fn assert_png(path: &Path) {
    let bytes = std::fs::read(path).unwrap();
    assert_eq!(
        &bytes[..8],
        b"\x89PNG\r\n\x1a\n",
        "{}: PNG signature",
        path.display()
    );
    let decoder = png::Decoder::new(std::io::Cursor::new(&bytes));
    let mut reader = decoder.read_info().unwrap();
    let mut pixels = vec![0; reader.output_buffer_size()];
    let info = reader.next_frame(&mut pixels).unwrap();
    assert_eq!((info.width, info.height), (960, 540), "{}", path.display());
    let pixels = &pixels[..info.buffer_size()];
    let channels = info.color_type.samples();
    let ink = pixels
        .chunks(channels)
        .filter(|p| p.iter().take(3).any(|&v| v < 200))
        .count();
    let total = (info.width * info.height) as usize;
    // Axes, labels and curves: some ink, but far from a filled picture.
    assert!(
        ink > total / 200 && ink < total / 2,
        "{}: {ink} of {total} pixels drawn",
        path.display()
    );
}

#[test]
fn the_demo_draws_its_figures_and_their_time_axes_cover_the_run() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("demo");
    let (ok, stdout, stderr) = dilata(&["demo", "--threads", "2", "--out", out.to_str().unwrap()]);
    assert!(ok, "demo failed: {stderr}");
    assert!(stdout.contains("8 figures (PNG and SVG)"), "{stdout}");
    let times = history_times(&out);
    let range = times
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), t| {
            (a.min(*t), b.max(*t))
        });
    assert!(times.len() > 5 && range.1 > range.0, "{range:?}");
    for stem in FIGURE_STEMS {
        assert_png(&out.join(format!("{stem}.png")));
        let (texts, axis) = read_svg(&out.join(format!("{stem}.svg")));
        assert_covers(stem, &axis, range);
        // The change from the charge to the rest stage is marked and named.
        assert!(texts.contains("rest"), "{stem}: {texts}");
    }

    // `dilata plot` redraws the same figures elsewhere.
    let again = dir.path().join("again");
    let (ok, stdout, stderr) = dilata(&[
        "plot",
        out.to_str().unwrap(),
        "--out",
        again.to_str().unwrap(),
    ]);
    assert!(ok, "plot failed: {stderr}");
    assert!(stdout.contains("8 figures written"), "{stdout}");
    for stem in FIGURE_STEMS {
        assert_eq!(
            std::fs::read(again.join(format!("{stem}.svg"))).unwrap(),
            std::fs::read(out.join(format!("{stem}.svg"))).unwrap(),
            "{stem}: the same history gives the same figure"
        );
    }
}

#[test]
fn plot_follows_a_history_that_starts_late_and_skips_missing_columns() {
    // A history that starts far from t = 0 (as a continued run would) and has no stress or
    // energy columns: the time axis must follow the rows, not start at zero.
    let dir = tempfile::tempdir().unwrap();
    let mut text = String::from("time_s,step,stage,dt_s,c_mean_mol_m3,c_min_mol_m3,c_max_mol_m3\n");
    for i in 0..40 {
        let t = 5.0e4 + 25.0 * i as f64;
        let stage = if i < 25 { "hold" } else { "unload" };
        text.push_str(&format!(
            "{t:e},{i},{stage},25,{},{},{}\n",
            100.0 + i as f64,
            90.0,
            110.0 + 2.0 * i as f64
        ));
    }
    std::fs::write(dir.path().join("history.csv"), text).unwrap();
    let (ok, stdout, stderr) = dilata(&["plot", dir.path().to_str().unwrap()]);
    assert!(ok, "{stderr}");
    assert!(stdout.contains("4 figures written"), "{stdout}");
    assert!(!dir.path().join("plot_stress.svg").exists());
    let times = history_times(dir.path());
    let range = (times[0], *times.last().unwrap());
    for stem in ["plot_concentration", "plot_step_size"] {
        assert_png(&dir.path().join(format!("{stem}.png")));
        let (texts, axis) = read_svg(&dir.path().join(format!("{stem}.svg")));
        assert_covers(stem, &axis, range);
        assert!(texts.contains("unload"), "{stem}: {texts}");
    }
}

#[test]
fn plot_errors_name_the_file_and_the_line() {
    let dir = tempfile::tempdir().unwrap();
    let (ok, _, stderr) = dilata(&["plot", dir.path().to_str().unwrap()]);
    assert!(!ok);
    assert!(
        stderr.contains("history.csv: cannot read"),
        "missing history: {stderr}"
    );
    std::fs::write(
        dir.path().join("history.csv"),
        "time_s,stage,dt_s\n1,a,1\n2,a,oops\n",
    )
    .unwrap();
    let (ok, _, stderr) = dilata(&["plot", dir.path().to_str().unwrap()]);
    assert!(!ok);
    assert!(
        stderr.contains("history.csv:3: column 'dt_s': expected a number, found 'oops'"),
        "{stderr}"
    );
}

// ---- Field pictures (`dilata plot DIR --field NAME`) ----

use dilata_io::{write_vtu, FieldData, FieldKind, PvdWriter};
use dilata_mesh::{CellBlock, CellKind, Mesh};
use dilata_plot::colour::{colour, BOTTOM, TOP};

/// A strip of three unit quad4 cells along x; `c` is 1 on the nodes of the left cell, 0 on
/// those of the right cell (so the middle cell has two nodes at 1 and two at 0), plus a vector
/// `u`. Written as `fields_0000.vtu` and `fields_0001.vtu` at t = 0 and t = 2.5 (the second
/// with c scaled by `late`) and listed in `fields.pvd`.
fn strip_run(dir: &Path, late: f64) {
    let xs = [0.0, 1.0, 2.0, 3.0];
    let mut points = Vec::new();
    for y in [0.0, 1.0] {
        for x in xs {
            points.push([x, y, 0.0]);
        }
    }
    let mesh = Mesh {
        dim: 2,
        points,
        blocks: vec![CellBlock {
            kind: CellKind::Quad4,
            connectivity: vec![0, 1, 5, 4, 1, 2, 6, 5, 2, 3, 7, 6],
        }],
        ..Mesh::default()
    };
    let c = [1.0, 1.0, 0.0, 0.0, 1.0, 1.0, 0.0, 0.0];
    let mut pvd = PvdWriter::new(&dir.join("fields.pvd"));
    for (i, (t, scale)) in [(0.0, 1.0), (2.5, late)].into_iter().enumerate() {
        let name = format!("fields_{i:04}.vtu");
        let fields = [
            FieldData::new("u", FieldKind::Vector, vec![0.0; 16]),
            FieldData::new(
                "c",
                FieldKind::Scalar,
                c.iter().map(|v| v * scale).collect(),
            ),
        ];
        write_vtu(&dir.join(&name), &mesh, &fields, &[]).unwrap();
        pvd.add(t, &name);
    }
    pvd.write().unwrap();
}

/// Decoded RGB pixels and size of a PNG file.
fn decode_png(path: &Path) -> (Vec<[u8; 3]>, u32, u32) {
    let bytes = std::fs::read(path).unwrap();
    let decoder = png::Decoder::new(std::io::Cursor::new(&bytes));
    let mut reader = decoder.read_info().unwrap();
    let mut buf = vec![0; reader.output_buffer_size()];
    let info = reader.next_frame(&mut buf).unwrap();
    assert_eq!(info.color_type, png::ColorType::Rgb, "{}", path.display());
    let pixels = buf[..info.buffer_size()]
        .chunks(3)
        .map(|p| [p[0], p[1], p[2]])
        .collect();
    (pixels, info.width, info.height)
}

/// Bounding box (x0, x1, y0, y1) of the pixels of exactly `rgb`, with their count.
fn colour_box(
    pixels: &[[u8; 3]],
    width: u32,
    rgb: [u8; 3],
) -> Option<((u32, u32, u32, u32), usize)> {
    let mut b: Option<(u32, u32, u32, u32)> = None;
    let mut n = 0;
    for (i, p) in pixels.iter().enumerate() {
        if *p == rgb {
            n += 1;
            let (x, y) = (i as u32 % width, i as u32 / width);
            b = Some(match b {
                None => (x, x, y, y),
                Some((a, bb, c, d)) => (a.min(x), bb.max(x), c.min(y), d.max(y)),
            });
        }
    }
    b.map(|b| (b, n))
}

/// The three bytes of a colour of the map.
macro_rules! rgb {
    ($c:expr) => {{
        let c = $c;
        [c.0, c.1, c.2]
    }};
}

/// The cell whose nodal values are all at the top of the colour range is filled with the top
/// colour of the map, the cell all at the bottom with the bottom colour, and the cell between
/// (mean value at the middle of the range) with the middle colour; the three sit side by side
/// as in the mesh, square cells drawn square. The colour range is shared by both pictures: in
/// the second (c halved) the left cell has the middle colour. Geometry and colour of a drawing:
/// common practice, no source.
#[test]
fn field_pictures_colour_cells_by_their_values_on_a_shared_range() {
    let dir = tempfile::tempdir().unwrap();
    strip_run(dir.path(), 0.5);
    let (ok, stdout, stderr) = dilata(&[
        "plot",
        dir.path().to_str().unwrap(),
        "--field",
        "c",
        "--svg",
    ]);
    assert!(ok, "{stderr}");
    assert!(stdout.contains("4 field pictures written"), "{stdout}");
    let first = dir.path().join("field_c_0000.png");
    let second = dir.path().join("field_c_0001.png");
    assert!(dir.path().join("field_c_0001.svg").is_file());
    let (pixels, w, h) = decode_png(&first);
    assert_eq!((w, h), (800, 640));
    let ((tx0, tx1, ty0, ty1), top_count) = colour_box(&pixels, w, rgb!(TOP)).expect("top colour");
    let ((bx0, bx1, by0, by1), bottom_count) =
        colour_box(&pixels, w, rgb!(BOTTOM)).expect("bottom colour");
    let side = (tx1 - tx0 + 1) as f64;
    println!("top cell {tx0}..{tx1} x {ty0}..{ty1}, bottom cell {bx0}..{bx1} x {by0}..{by1}");
    // A filled square of at least 100 px, as tall as it is wide, entirely one colour.
    assert!(side > 100.0, "top cell {side} px wide");
    assert!(((ty1 - ty0 + 1) as f64 - side).abs() <= 2.0);
    assert!(
        top_count as f64 >= 0.98 * side * side,
        "{top_count} px of {side}²"
    );
    assert!(
        bottom_count as f64 >= 0.98 * side * side,
        "{bottom_count} px"
    );
    // Same row, two cell widths further right (the middle cell between them).
    assert!((by0 as i64 - ty0 as i64).abs() <= 1 && (by1 as i64 - ty1 as i64).abs() <= 1);
    let gap = bx0 as f64 - tx1 as f64;
    assert!((gap - side).abs() <= 3.0, "gap {gap} px, cell {side} px");
    let at = |x: u32, y: u32| pixels[(y * w + x) as usize];
    let mid_y = (ty0 + ty1) / 2;
    assert_eq!(at((tx0 + tx1) / 2, mid_y), rgb!(TOP));
    assert_eq!(at((bx0 + bx1) / 2, mid_y), rgb!(BOTTOM));
    assert_eq!(at((tx1 + bx0) / 2, mid_y), rgb!(colour(0.5)));

    // Second snapshot on the same range: the left cell (c = 0.5 now) has the middle colour and
    // nothing has the top colour.
    let (pixels, w, _) = decode_png(&second);
    assert!(colour_box(&pixels, w, rgb!(TOP)).is_none());
    assert_eq!(
        pixels[(mid_y * w + (tx0 + tx1) / 2) as usize],
        rgb!(colour(0.5))
    );
    assert_eq!(pixels[(mid_y * w + (bx0 + bx1) / 2) as usize], rgb!(BOTTOM));
}

#[test]
fn field_pictures_at_chosen_times_with_a_given_range_and_components() {
    let dir = tempfile::tempdir().unwrap();
    strip_run(dir.path(), 0.5);
    let out = dir.path().join("pictures");
    let d = dir.path().to_str().unwrap();
    let (ok, stdout, stderr) = dilata(&[
        "plot",
        d,
        "--field",
        "c",
        "--field",
        "u[1]",
        "--times",
        "2",
        "--range",
        "0,2",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert!(ok, "{stderr}");
    assert!(stdout.contains("2 field pictures written"), "{stdout}");
    // Only the snapshot nearest t = 2 (t = 2.5), no SVG.
    let mut names: Vec<String> = std::fs::read_dir(&out)
        .unwrap()
        .map(|e| e.unwrap().file_name().into_string().unwrap())
        .collect();
    names.sort();
    assert_eq!(names, vec!["field_c_0001.png", "field_u_1_0001.png"]);
    // Range 0..2: the left cell (c = 0.5) has the colour of a quarter of the range.
    let (pixels, w, _) = decode_png(&out.join("field_c_0001.png"));
    assert!(colour_box(&pixels, w, rgb!(colour(0.25))).is_some());
    assert!(colour_box(&pixels, w, rgb!(colour(0.5))).is_none());
}

#[test]
fn field_picture_errors_say_what_exists() {
    let dir = tempfile::tempdir().unwrap();
    strip_run(dir.path(), 1.0);
    let d = dir.path().to_str().unwrap();
    let fails = |args: &[&str], expected: &[&str]| {
        let (ok, _, stderr) = dilata(args);
        assert!(!ok, "{args:?} succeeded");
        for e in expected {
            assert!(stderr.contains(e), "{args:?}: expected '{e}' in: {stderr}");
        }
    };
    let missing = dir.path().join("nothing");
    fails(
        &["plot", missing.to_str().unwrap(), "--field", "c"],
        &["nothing", "no such results directory"],
    );
    let empty = tempfile::tempdir().unwrap();
    fails(
        &["plot", empty.path().to_str().unwrap(), "--field", "c"],
        &["no fields.pvd"],
    );
    fails(
        &["plot", d, "--field", "sigma"],
        &["field 'sigma'", "no point array 'sigma'", "it has: u, c"],
    );
    fails(&["plot", d, "--field", "u"], &["3 components", "u[0]"]);
    fails(
        &["plot", d, "--field", "u[5]"],
        &["component 5", "'u' has 3"],
    );
    fails(
        &["plot", d, "--field", "c", "--times", "9"],
        &["time 9", "span 0 s to 2.5 s"],
    );
    fails(
        &["plot", d, "--field", "c", "--range", "1,0"],
        &["colour range 1..0"],
    );
    fails(
        &["plot", d, "--field", "c", "--range", "-1"],
        &["--range: expected two numbers LOW,HIGH, got 1"],
    );
    // A snapshot listed in the collection but gone: the error names it; nothing was drawn.
    std::fs::remove_file(dir.path().join("fields_0001.vtu")).unwrap();
    fails(
        &["plot", d, "--field", "c"],
        &["fields_0001.vtu", "no such file"],
    );
    assert!(!dir.path().join("field_c_0000.png").exists());

    // A 3D run: refused with the reason.
    let solid = tempfile::tempdir().unwrap();
    let mesh = Mesh {
        dim: 3,
        points: (0..8)
            .map(|i| [(i & 1) as f64, ((i >> 1) & 1) as f64, ((i >> 2) & 1) as f64])
            .collect(),
        blocks: vec![CellBlock {
            kind: CellKind::Hex8,
            connectivity: vec![0, 1, 3, 2, 4, 5, 7, 6],
        }],
        ..Mesh::default()
    };
    let c = FieldData::new("c", FieldKind::Scalar, vec![0.0; 8]);
    write_vtu(&solid.path().join("fields_0000.vtu"), &mesh, &[c], &[]).unwrap();
    let mut pvd = PvdWriter::new(&solid.path().join("fields.pvd"));
    pvd.add(0.0, "fields_0000.vtu");
    pvd.write().unwrap();
    fails(
        &["plot", solid.path().to_str().unwrap(), "--field", "c"],
        &["2D runs only", "hexahedron"],
    );
}
