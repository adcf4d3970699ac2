//! Time the figure pipeline on every example session in every view its
//! settings allow: the computation (analysis with the session's orbits, sweep,
//! fold curves or backbone), scene, SVG text and PNG rasterisation at 1600x1200,
//! best of several runs each.
//!
//! Run: `cargo run --release --no-default-features --example bench_render`

use phasewright::core::Cancel;
use phasewright::render::png::rasterize;
use phasewright::render::{FigureSize, View, to_svg, view_data, view_scene};
use phasewright::request::Overrides;
use phasewright::scene::BackbonePlot;
use std::path::Path;
use std::time::{Duration, Instant};

const RUNS: usize = 5;

fn best<T>(mut f: impl FnMut() -> T) -> (Duration, T) {
    let mut best = Duration::MAX;
    let mut last = None;
    for _ in 0..RUNS {
        let t = Instant::now();
        let v = f();
        best = best.min(t.elapsed());
        last = Some(v);
    }
    match last {
        Some(v) => (best, v),
        None => (best, f()),
    }
}

fn ms(d: Duration) -> String {
    format!("{:8.1}", d.as_secs_f64() * 1e3)
}

fn main() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("sessions");
    let mut files: Vec<_> = match std::fs::read_dir(&dir) {
        Ok(rd) => rd
            .filter_map(|e| e.ok().map(|e| e.path()))
            .filter(|p| p.extension().is_some_and(|x| x == "json"))
            // the format's schema lives beside the examples
            .filter(|p| !p.to_string_lossy().ends_with(".schema.json"))
            .collect(),
        Err(e) => {
            eprintln!("cannot read {}: {e}", dir.display());
            return;
        }
    };
    files.sort();
    let size = FigureSize {
        width: 1600,
        height: 1200,
    };
    println!(
        "best of {RUNS} runs, PNG at {}x{} (milliseconds)",
        size.width, size.height
    );
    println!(
        "{:<28} {:>8} {:>8} {:>8} {:>8} {:>8} {:>9}",
        "session/view", "compute", "scene", "svg", "png", "total", "svg bytes"
    );
    for path in files {
        let name = path
            .file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_default();
        let session = match phasewright::session::load_file(&path) {
            Ok((s, _)) => s,
            Err(e) => {
                eprintln!("{name}: {e}");
                continue;
            }
        };
        let sys = match session.system() {
            Ok(s) => s,
            Err(e) => {
                eprintln!("{name}: {e}");
                continue;
            }
        };
        let mut views = vec![View::Portrait, View::Backbone(BackbonePlot::PeriodEnergy)];
        if session.sweep.is_some() {
            views.push(View::Diagram);
        }
        if session.folds.is_some() {
            views.push(View::Folds);
        }
        for view in views {
            let label = format!("{name}/{}", view.name());
            let (t_analyze, data) = best(|| {
                view_data(
                    &session,
                    &sys,
                    &session.view,
                    view,
                    &Overrides::default(),
                    &Cancel::never(),
                )
            });
            let data = match data {
                Ok(d) => d,
                Err(e) => {
                    eprintln!("{label}: {e}");
                    continue;
                }
            };
            let (t_scene, scene) = best(|| view_scene(&session, &sys, &data, view));
            let (t_svg, svg) = best(|| to_svg(&scene, size));
            let (t_png, png) = best(|| rasterize(&svg, 1.0));
            if let Err(e) = png {
                eprintln!("{label}: {e}");
                continue;
            }
            let total = t_analyze + t_scene + t_svg + t_png;
            println!(
                "{label:<28} {} {} {} {} {} {:>9}",
                ms(t_analyze),
                ms(t_scene),
                ms(t_svg),
                ms(t_png),
                ms(total),
                svg.len()
            );
        }
    }
}
