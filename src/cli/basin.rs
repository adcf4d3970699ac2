//! `basin` and `erosion`: the safe basins of the wells under the drive, and
//! how their integrity falls as the drive amplitude grows.

use super::*;
use crate::core::basin::{Basin, Erosion, MAX_AMPLITUDES, MAX_LATTICE, MAX_PERIODS};
use crate::numbers::clean;
use crate::render::{ExportFormat, FigureSize, ViewData};
use crate::request::{BasinRequest, ErosionRequest};
use crate::session::BasinSettings;
use crate::session::basin::{MIN_BASIN_LATTICE, MIN_EROSION_VALUES};

/// The lattice and periods of a basin, shared by `basin` and `erosion`.
#[derive(Debug, Clone, Default, Args)]
pub struct BasinFlags {
    /// Starts per side of the lattice over the window (default: the
    /// session's basin.lattice, else 200).
    #[arg(long, value_name = "N")]
    pub grid: Option<usize>,
    /// Drive periods a start must stay to be safe (default: the session's
    /// basin.periods, else 60).
    #[arg(long, value_name = "N")]
    pub periods: Option<usize>,
    /// A point Q,P near the center of the one well wanted (default: every
    /// well in view).
    #[arg(long, value_name = "Q,P", allow_hyphen_values = true)]
    pub well: Option<String>,
    /// Write the figure (FILE.svg or FILE.png) instead of printing.
    #[arg(short = 'o', long = "output", value_name = "FILE")]
    pub figure: Option<PathBuf>,
    /// Figure size in pixels, WIDTHxHEIGHT.
    #[arg(long, value_name = "WIDTHxHEIGHT", default_value = "1000x750")]
    pub size: String,
}

fn count(flag: &str, n: usize, lo: usize, hi: usize) -> Result<usize, CliError> {
    if (lo..=hi).contains(&n) {
        Ok(n)
    } else {
        Err(CliError(format!("{flag} {n}: give {lo} to {hi}")))
    }
}

impl BasinFlags {
    /// Put the flags into the session's basin settings (creating them).
    fn apply(&self, b: &mut BasinSettings) -> Result<(), CliError> {
        if let Some(n) = self.grid {
            b.lattice = Some(count("--grid", n, MIN_BASIN_LATTICE, MAX_LATTICE)?);
        }
        if let Some(n) = self.periods {
            b.periods = Some(count("--periods", n, 1, MAX_PERIODS)?);
        }
        if let Some(text) = &self.well {
            let v = parse_numbers("well", text, 2, "Q,P")?;
            b.center = Some([v[0], v[1]]);
        }
        Ok(())
    }

    /// Write `data`'s figure to the file `-o` names; the line to print.
    fn write_figure(&self, r: &Resolved, data: &ViewData, view: View) -> Result<String, CliError> {
        let Some(path) = &self.figure else {
            return Ok(String::new());
        };
        let Some(ExportFormat::Figure(format)) =
            ExportFormat::from_path(path, render::PortraitTable::default())
        else {
            return Err(CliError(format!(
                "-o {}: the file name must end in .svg or .png",
                path.display()
            )));
        };
        let size = FigureSize::parse(&self.size).map_err(|e| CliError(format!("--size: {e}")))?;
        let out = render::export_data(
            &r.session,
            &r.system,
            data,
            view,
            ExportFormat::Figure(format),
            size,
        )
        .map_err(|e| view_error(&e, view.name()))?;
        session::write_atomic(path, |w| w.write_all(&out.bytes))
            .map_err(|e| CliError(e.to_string()))?;
        Ok(format!("wrote {} ({})", path.display(), out.summary))
    }
}

/// Arguments of `basin`.
#[derive(Debug, Clone, Args)]
pub struct BasinArgs {
    #[command(flatten)]
    pub system: SystemArgs,
    #[command(flatten)]
    pub drive: DriveFlags,
    #[command(flatten)]
    pub basin: BasinFlags,
    /// `--json` prints the measures as JSON; `--csv` the mask, one row per start.
    #[command(flatten)]
    pub output: OutputArgs,
}

/// Arguments of `erosion`.
#[derive(Debug, Clone, Args)]
pub struct ErosionArgs {
    #[command(flatten)]
    pub system: SystemArgs,
    #[command(flatten)]
    pub drive: DriveFlags,
    #[command(flatten)]
    pub basin: BasinFlags,
    /// The drive-amplitude parameter varied (default: the drive's amplitude).
    #[arg(long, value_name = "NAME")]
    pub param: Option<String>,
    /// First amplitude (default: the session's basin.from, else the slider minimum).
    #[arg(long, value_name = "A", allow_hyphen_values = true)]
    pub from: Option<f64>,
    /// Last amplitude (default: the session's basin.to, else the slider maximum).
    #[arg(long, value_name = "B", allow_hyphen_values = true)]
    pub to: Option<f64>,
    /// Amplitudes on the curve, both ends included (default 40).
    #[arg(long, value_name = "N")]
    pub values: Option<usize>,
    /// `--json` prints the curve as JSON; `--csv` one row per amplitude and well.
    #[command(flatten)]
    pub output: OutputArgs,
}

/// The session with the drive and basin flags in it.
fn resolve_basin(
    system: &SystemArgs,
    drive: &DriveFlags,
    flags: &BasinFlags,
) -> Result<Resolved, CliError> {
    let mut r = resolve_driven(system, drive)?;
    let mut b = r.session.basin.clone().unwrap_or_default();
    flags.apply(&mut b)?;
    r.session.basin = Some(b);
    print_warnings(&r.warnings);
    Ok(r)
}

/// `basin`: the safe basin of every well (or the one `--well` names).
pub fn run_basin(args: &BasinArgs) -> Result<String, CliError> {
    let r = resolve_basin(&args.system, &args.drive, &args.basin)?;
    let request = BasinRequest::from_session(&r.session, &r.system)
        .map_err(|e| CliError(format!("basin: {e}")))?;
    let data = render::basin_data(&r.system, &request, &Cancel::never(), &|_, _| {})
        .map_err(|e| view_error(&e, "basin"))?;
    if args.basin.figure.is_some() {
        return args
            .basin
            .write_figure(&r, &ViewData::Basin(data), View::Basin);
    }
    let b = &data.basin;
    Ok(emit(
        &r,
        &args.output,
        b,
        || render::table::basin_table(b),
        || basin_text(&r, b),
    ))
}

/// `erosion`: the integrity measures against the drive amplitude.
pub fn run_erosion(args: &ErosionArgs) -> Result<String, CliError> {
    let mut r = resolve_basin(&args.system, &args.drive, &args.basin)?;
    if let Some(name) = &args.param {
        known_parameter(&r.session, "--param", name)?;
        if let Some(d) = r.session.drive.as_mut() {
            d.amplitude = Some(name.clone());
        }
    }
    if let Some(b) = r.session.basin.as_mut() {
        for (flag, v, slot) in [
            ("--from", args.from, &mut b.from),
            ("--to", args.to, &mut b.to),
        ] {
            if let Some(v) = v {
                if !v.is_finite() {
                    return Err(CliError(format!("{flag} {v}: give a finite number")));
                }
                *slot = Some(v);
            }
        }
        if let Some(n) = args.values {
            b.values = Some(count("--values", n, MIN_EROSION_VALUES, MAX_AMPLITUDES)?);
        }
    }
    let request = ErosionRequest::from_session(&r.session, &r.system)
        .map_err(|e| CliError(format!("erosion: {e}")))?;
    if request.from == request.to {
        return Err(CliError(format!(
            "erosion: --from and --to are both {}; give a range",
            request.from
        )));
    }
    let e = request
        .run(&r.system, &Cancel::never(), &|_, _| {})
        .map_err(|e| CliError(format!("erosion: {e}")))?;
    if args.basin.figure.is_some() {
        return args
            .basin
            .write_figure(&r, &ViewData::Erosion(e), View::Erosion);
    }
    Ok(emit(
        &r,
        &args.output,
        &e,
        || render::table::erosion_table(&e),
        || erosion_text(&r, &e),
    ))
}

const CAUTION: &str = "A safe basin of a single-mode model with linear damping and a harmonic \
     drive is an indication, not a margin: real structures need the full model, tests, and \
     the local codes and licensed engineering practice.";

/// The basin's measures as readable text.
fn basin_text(r: &Resolved, b: &Basin) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "H(q, p, t) = {}", r.session.formula);
    let _ = writeln!(
        out,
        "drive period {}, damping {}; {}×{} starts, {} drive periods, {} with {} steps per period",
        num(b.period),
        num(b.damping),
        b.lattice,
        b.lattice,
        b.periods,
        b.method.name(),
        b.steps_per_period
    );
    // rounding noise next to zero (an escape energy of -4e-87) is written as 0
    let view = &r.window;
    let h_scale = b
        .wells
        .iter()
        .map(|w| w.escape_energy.abs())
        .fold(1.0, f64::max);
    let rows: Vec<Vec<String>> = b
        .wells
        .iter()
        .enumerate()
        .map(|(k, w)| {
            vec![
                format!(
                    "{}{}",
                    k + 1,
                    if w.truncated { " (cut by view)" } else { "" }
                ),
                num(clean(w.center[0], view.width())),
                num(clean(w.center[1], view.height())),
                num(clean(w.escape_energy, h_scale)),
                format!("{}", w.starts),
                format!("{}", w.safe),
                num(w.safe_area),
                num(w.reference_area),
                num(w.integrity),
                num(w.safe_radius),
                num(w.local_integrity),
            ]
        })
        .collect();
    let _ = writeln!(out, "\nWells ({})", b.wells.len());
    table(
        &mut out,
        &[
            "#",
            "center q",
            "center p",
            "escape energy",
            "starts in well",
            "safe",
            "safe area",
            "undriven area",
            "integrity",
            "safe radius",
            "local integrity",
        ],
        &rows,
    );
    if b.cancelled {
        let _ = writeln!(out, "Cancelled: the counts are partial.");
    }
    let _ = writeln!(out, "{CAUTION}");
    out
}

/// The erosion curve as readable text.
fn erosion_text(r: &Resolved, e: &Erosion) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "H(q, p, t) = {}", r.session.formula);
    let _ = writeln!(
        out,
        "{}×{} starts, {} drive periods, {} steps per period; integrity against {}",
        e.lattice, e.lattice, e.periods, e.steps_per_period, e.amplitude
    );
    let mut header = vec![e.amplitude.clone()];
    for c in &e.centers {
        header.push(format!("global (q = {})", num(c[0])));
        header.push(format!("local (q = {})", num(c[0])));
    }
    let rows: Vec<Vec<String>> = e
        .points
        .iter()
        .map(|p| {
            let mut row = vec![num(p.amplitude)];
            for (g, l) in p.integrity.iter().zip(&p.local_integrity) {
                row.push(num(*g));
                row.push(num(*l));
            }
            row
        })
        .collect();
    let h: Vec<&str> = header.iter().map(String::as_str).collect();
    table(&mut out, &h, &rows);
    match e.threshold {
        Some(t) => {
            let _ = writeln!(
                out,
                "\nMelnikov threshold: {} = {} (a chaotic layer is expected above it).",
                e.amplitude,
                num(t)
            );
        }
        None => {
            let _ = writeln!(
                out,
                "\nNo Melnikov threshold (no separatrix connection found)."
            );
        }
    }
    let _ = writeln!(out, "{CAUTION}");
    out
}
