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
