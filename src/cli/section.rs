//! `section`: the stroboscopic section of a driven system.

use super::*;
use crate::core::section::Section;
use crate::request::SectionRequest;

/// Arguments of `section`.
#[derive(Debug, Clone, Args)]
pub struct SectionArgs {
    #[command(flatten)]
    pub system: SystemArgs,
    #[command(flatten)]
    pub drive: DriveFlags,
    /// Drive periods per start (default: the session's drive, else 300).
    #[arg(long, value_name = "N")]
    pub periods: Option<usize>,
    /// The starts: `grid:NxM` (a lattice over the window, cell centres) or
    /// `q,p;q,p;…` (default: the session's lattice and seeded orbits).
    #[arg(long, value_name = "grid:NxM|q,p;…", allow_hyphen_values = true)]
    pub starts: Option<String>,
    /// `--json` prints every point as JSON; `--csv` prints orbit, k, q, p.
    #[command(flatten)]
    pub output: OutputArgs,
}

/// Parse `--starts` over `view`.
pub fn parse_starts(text: &str, view: &Window) -> Result<Vec<[f64; 2]>, CliError> {
    let bad = |why: String| CliError(format!("--starts {text}: {why}"));
    if let Some(grid) = text.trim().strip_prefix("grid:") {
        let Some((n, m)) = grid.split_once(['x', 'X']) else {
            return Err(bad("expected grid:NxM, e.g. grid:10x10".into()));
        };
        let count = |s: &str| -> Result<usize, CliError> {
            s.trim()
                .parse::<usize>()
                .ok()
                .filter(|&k| (1..=crate::core::section::MAX_STARTS).contains(&k))
                .ok_or_else(|| bad(format!("\"{s}\" is not a whole number of starts from 1 up")))
        };
        let (n, m) = (count(n)?, count(m)?);
        if n * m > crate::core::section::MAX_STARTS {
            return Err(bad(format!(
                "{n}×{m} starts; at most {} are taken",
                crate::core::section::MAX_STARTS
            )));
        }
        let mut out = Vec::with_capacity(n * m);
        for j in 0..m {
            for i in 0..n {
                out.push([
                    view.qmin + (i as f64 + 0.5) * view.width() / n as f64,
                    view.pmin + (j as f64 + 0.5) * view.height() / m as f64,
                ]);
            }
        }
        return Ok(out);
    }
    text.split(';')
        .filter(|s| !s.trim().is_empty())
        .enumerate()
        .map(|(k, pair)| {
            let v = parse_numbers("starts", pair, 2, "Q,P")
                .map_err(|e| bad(format!("start {}: {}", k + 1, e.0)))?;
            Ok([v[0], v[1]])
        })
        .collect()
}

/// `section`: the drive-period map iterated from every start.
pub fn run_section(args: &SectionArgs) -> Result<String, CliError> {
    let mut r = resolve_driven(&args.system, &args.drive)?;
    if let (Some(n), Some(d)) = (args.periods, r.session.drive.as_mut()) {
        if !(1..=crate::session::drive::MAX_SECTION_PERIODS).contains(&n) {
            return Err(CliError(format!(
                "--periods {n}: give 1 to {}",
                crate::session::drive::MAX_SECTION_PERIODS
            )));
        }
        d.periods = Some(n);
    }
    print_warnings(&r.warnings);
    let mut req = SectionRequest::from_session(&r.session, &[])
        .map_err(|e| CliError(format!("section: {e}")))?;
    if let Some(text) = &args.starts {
        req.starts = parse_starts(text, &r.window)?;
    }
    let s = req
        .run(&r.system, &Cancel::never(), &|_, _| {})
        .map_err(|e| CliError(format!("section: {e}")))?;
    Ok(emit(
        &r,
        &args.output,
        &s,
        || render::table::section_table(&s),
        || section_text(&r, &s),
    ))
}

/// The section as readable text: one line per start.
pub(super) fn section_text(r: &Resolved, s: &Section) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "H(q, p, t) = {}", r.session.formula);
    let _ = writeln!(
        out,
        "drive period {}, damping {}; {} with {} steps per period (step {})",
        num(s.period),
        num(s.damping),
        s.method.name(),
        s.steps_per_period,
        num(s.step)
    );
    let _ = writeln!(out, "\nStarts ({})", s.orbits.len());
    let rows: Vec<Vec<String>> = s
        .orbits
        .iter()
        .enumerate()
        .map(|(k, o)| {
            let last = o.points.last().copied().unwrap_or(o.start);
            vec![
                format!("{}", k + 1),
                num(o.start[0]),
                num(o.start[1]),
                format!("{}", o.points.len()),
                match o.end {
                    crate::core::section::SectionEnd::Completed => "all periods",
                    crate::core::section::SectionEnd::LeftBounds => "left the bounds",
                    crate::core::section::SectionEnd::NonFinite => "H not finite",
                    crate::core::section::SectionEnd::Cancelled => "cancelled",
                }
                .to_string(),
                num(last[0]),
                num(last[1]),
            ]
        })
        .collect();
    table(
        &mut out,
        &["#", "q0", "p0", "points", "ended", "last q", "last p"],
        &rows,
    );
    let _ = writeln!(
        out,
        "A conservative model with a linear damping rate and a harmonic drive; decisions \
         about real devices defer to local codes and licensed practice."
    );
    out
}
