//! Frame times of the explorer, measured headless: the real `Explorer` runs
//! inside an egui context at a simulated 60 Hz while the first parameter of
//! each bundled example is dragged from one end of its range to the other.
//! Each frame is timed from input to tessellated triangles (what the UI
//! thread does before the GPU draws); the worker's job times come from the
//! results it returns. A session with ħ runs twice, with its quantized
//! orbits on the portrait ("levels on", computed on their own lane while the
//! slider moves) and off. Run: `cargo run --release --example explorer_frames`.

use phasewright::gui::{EXAMPLES, Explorer};
use std::time::{Duration, Instant};

const FRAMES: usize = 180;
const FRAME_PERIOD: Duration = Duration::from_micros(16_667);

fn percentile(sorted: &[f64], q: f64) -> f64 {
    if sorted.is_empty() {
        return f64::NAN;
    }
    let i = ((sorted.len() - 1) as f64 * q).round() as usize;
    sorted[i.min(sorted.len() - 1)]
}

fn main() {
    println!(
        "{:<28} {:>8} {:>8} {:>8} {:>10} {:>10} {:>9}",
        "example", "ui mean", "ui p95", "ui max", "updates/s", "coarse job", "fine job"
    );
    let mut runs = Vec::new();
    for (name, text) in EXAMPLES {
        let session = match phasewright::session::load(text) {
            Ok((s, _)) => s,
            Err(e) => {
                println!("{name}: {e}");
                continue;
            }
        };
        let name = name.trim_end_matches(".json").to_string();
        if session.quantum.is_some() {
            for on in [true, false] {
                let mut s = session.clone();
                if let Some(q) = s.quantum.as_mut() {
                    q.on_portrait = on;
                }
                let label = format!("{name} (levels {})", if on { "on" } else { "off" });
                runs.push((label, s));
            }
        } else {
            runs.push((name, session));
        }
    }
    for (name, session) in runs {
        let Some(par) = session.parameters.first().cloned() else {
            println!("{name}: no parameter to drag");
            continue;
        };
        let mut app = match Explorer::new(session, None, None) {
            Ok(a) => a,
            Err(e) => {
                println!("{name}: {e}");
                continue;
            }
        };
        let ctx = egui::Context::default();
        let start = Instant::now();
        let frame = |app: &mut Explorer| -> f64 {
            let input = egui::RawInput {
                screen_rect: Some(egui::Rect::from_min_size(
                    egui::Pos2::ZERO,
                    egui::vec2(1280.0, 800.0),
                )),
                time: Some(start.elapsed().as_secs_f64()),
                ..Default::default()
            };
            let t0 = Instant::now();
            let mut out = ctx.run_ui(input, |ui| app.show(ui));
            // No painter here: the texture updates are dropped on purpose.
            out.textures_delta.clear();
            let triangles = ctx.tessellate(out.shapes, out.pixels_per_point);
            std::hint::black_box(triangles);
            t0.elapsed().as_secs_f64() * 1e3
        };
        // Settle on the session as loaded.
        frame(&mut app);
        app.wait_for_worker(Duration::from_secs(60));
        frame(&mut app);

        let mut ui_ms = Vec::with_capacity(FRAMES);
        let mut coarse_ms = Vec::new();
        let mut last_generation = app.shown_generation();
        let mut updates = 0usize;
        let drag_start = Instant::now();
        for k in 0..FRAMES {
            let tick = Instant::now();
            let v = par.min + (par.max - par.min) * k as f64 / (FRAMES - 1) as f64;
            app.set_parameter(&par.name, v, true);
            ui_ms.push(frame(&mut app));
            if app.shown_generation() != last_generation {
                last_generation = app.shown_generation();
                updates += 1;
                if let Some((a, o, true)) = app.last_job_ms() {
                    coarse_ms.push(a + o);
                }
            }
            if let Some(rest) = FRAME_PERIOD.checked_sub(tick.elapsed()) {
                std::thread::sleep(rest);
            }
        }
        let drag_seconds = drag_start.elapsed().as_secs_f64();
        // Release: the next frame asks for the full grid.
        app.set_parameter(&par.name, par.max, false);
        frame(&mut app);
        frame(&mut app);
        app.wait_for_worker(Duration::from_secs(60));
        let fine = app.last_job_ms().map_or(f64::NAN, |(a, o, _)| a + o);

        ui_ms.sort_by(f64::total_cmp);
        coarse_ms.sort_by(f64::total_cmp);
        let mean = ui_ms.iter().sum::<f64>() / ui_ms.len() as f64;
        let coarse_mean = if coarse_ms.is_empty() {
            f64::NAN
        } else {
            coarse_ms.iter().sum::<f64>() / coarse_ms.len() as f64
        };
        println!(
            "{:<28} {:>6.2}ms {:>6.2}ms {:>6.2}ms {:>10.1} {:>8.1}ms {:>7.1}ms",
            name,
            mean,
            percentile(&ui_ms, 0.95),
            percentile(&ui_ms, 1.0),
            updates as f64 / drag_seconds,
            coarse_mean,
            fine
        );
    }
}
