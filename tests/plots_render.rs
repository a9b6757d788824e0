//! Every SVG the commands write, rendered to pixels with resvg on small demo runs: each must
//! parse, have a size fit for a report page, and render with ink on it (axes, text and data),
//! not a blank page. `FADECAST_PLOT_PNG_DIR=DIR` also saves each as DIR/<run>-<plot>.png, to
//! be looked at (DEVELOPERS.md, "Looking at the outputs").

mod common;

use common::fadecast;
use std::path::{Path, PathBuf};

/// The runs and the plots each writes; small sample counts keep this under a few seconds.
fn runs() -> Vec<(&'static str, Vec<&'static str>, Vec<&'static str>)> {
    vec![
        ("cycle", vec!["cycle", "examples/van-fleet-winter-fast-charge.toml"], vec!["cycle.svg"]),
        ("forecast", vec!["forecast", "examples/airport-tug-2c.toml"], vec!["fade.svg"]),
        ("pack", vec!["forecast", "examples/home-storage-pack.toml", "--years", "2"], vec!["fade.svg", "pack.svg"]),
        (
            "bands",
            vec!["bands", "examples/van-fleet-bands.toml", "--samples", "24", "--warranty", "8:80", "--quiet"],
            vec!["bands.svg", "sensitivity.svg"],
        ),
        (
            "compare",
            vec![
                "compare",
                "examples/van-fleet-overnight.toml",
                "--profile",
                "profiles/overnight-charge-1c-drive.toml",
                "--profile",
                "profiles/fast-charge-2c.toml",
                "--profile",
                "profiles/multistage-fast-charge.toml",
                "--samples",
                "8",
            ],
            vec!["compare.svg"],
        ),
        ("fit", vec!["fit", "examples/fit/van-storage-fit.toml", "--holdout-after", "200"], vec!["fit.svg"]),
    ]
}

fn fonts() -> resvg::usvg::Options<'static> {
    let mut options = resvg::usvg::Options::default();
    let fonts = options.fontdb_mut();
    fonts.load_system_fonts();
    // The plots ask for the generic "sans-serif"; name one the machine has (Debian's DejaVu first).
    let family = fonts
        .faces()
        .flat_map(|face| face.families.iter().map(|(name, _)| name.clone()))
        .find(|name| name == "DejaVu Sans")
        .or_else(|| fonts.faces().next().and_then(|face| face.families.first().map(|(name, _)| name.clone())));
    if let Some(family) = family {
        fonts.set_sans_serif_family(family);
    }
    options
}

/// Renders one SVG; returns the pixmap.
fn render(path: &Path, options: &resvg::usvg::Options) -> resvg::tiny_skia::Pixmap {
    let text = std::fs::read_to_string(path).unwrap();
    let tree = resvg::usvg::Tree::from_str(&text, options).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    let size = tree.size().to_int_size();
    let mut pixmap = resvg::tiny_skia::Pixmap::new(size.width(), size.height()).unwrap();
    resvg::render(&tree, resvg::tiny_skia::Transform::default(), &mut pixmap.as_mut());
    pixmap
}

#[test]
fn every_plot_renders_with_ink_at_report_size() {
    let options = fonts();
    let keep: Option<PathBuf> = std::env::var_os("FADECAST_PLOT_PNG_DIR").map(PathBuf::from);
    let dir = tempfile::tempdir().unwrap();
    for (name, args, plots) in runs() {
        let out = dir.path().join(name);
        fadecast().args(&args).arg("--out").arg(&out).assert().success();
        for plot in plots {
            let path = out.join(plot);
            let pixmap = render(&path, &options);
            if let Some(keep) = &keep {
                std::fs::create_dir_all(keep).unwrap();
                let png = keep.join(format!("{name}-{}.png", plot.trim_end_matches(".svg")));
                pixmap.save_png(&png).unwrap();
            }
            let (width, height) = (pixmap.width(), pixmap.height());
            // 800 px scaled to a 16 cm column: the plots' text sizes are chosen for this width.
            assert_eq!(width, 800, "{name}/{plot}");
            assert!(height > 200, "{name}/{plot}: {height} px high");
            let pixels = pixmap.pixels();
            let inked = pixels.iter().filter(|p| p.alpha() > 0 && (p.red() < 200 || p.green() < 200 || p.blue() < 200));
            let dark = pixels.iter().filter(|p| p.alpha() > 0 && p.red() < 90 && p.green() < 90 && p.blue() < 90);
            let coloured = pixels.iter().filter(|p| {
                let (r, g, b) = (p.red() as i32, p.green() as i32, p.blue() as i32);
                p.alpha() > 0 && (r - g).abs().max((g - b).abs()).max((r - b).abs()) > 60
            });
            let share = |n: usize| n as f64 / pixels.len() as f64;
            // Axes, ticks and text are dark; curves and bands are coloured; the page is mostly white.
            assert!(share(dark.count()) > 0.002, "{name}/{plot}: no dark ink (axes, text)");
            assert!(share(coloured.count()) > 0.002, "{name}/{plot}: nothing in colour (data)");
            let inked = share(inked.count());
            assert!((0.01..0.8).contains(&inked), "{name}/{plot}: {:.1} % of the page inked", 100.0 * inked);
        }
    }
}
