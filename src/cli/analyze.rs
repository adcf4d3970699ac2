//! `analyze`: equilibria, wells, connections and diagnostics, as a table or JSON.

use super::*;
use crate::numbers::clean;

/// Arguments of `analyze`.
#[derive(Debug, Clone, Args)]
pub struct AnalyzeArgs {
    #[command(flatten)]
    pub system: SystemArgs,
    /// `--json` prints everything as JSON; `--csv` prints the equilibria as CSV.
    #[command(flatten)]
    pub output: OutputArgs,
}

/// `analyze`: equilibria, wells, connections, diagnostics.
pub fn run_analyze(args: &AnalyzeArgs) -> Result<String, CliError> {
    let r = args.system.resolve()?;
    print_warnings(&r.warnings);
    let a = analyze(
        &r.system,
        &r.window,
        &r.session.analysis_config(),
        &Cancel::never(),
    );
    #[derive(serde::Serialize)]
    struct Out<'a> {
        equilibria: &'a [crate::core::equilibria::Equilibrium],
        wells: &'a [crate::core::wells::Well],
        connections: &'a [crate::core::wells::Connection],
        diagnostics: &'a [crate::core::Diagnostic],
        cancelled: bool,
    }
    let out = Out {
        equilibria: &a.equilibria,
        wells: &a.wells,
        connections: &a.connections,
        diagnostics: &a.diagnostics,
        cancelled: a.cancelled,
    };
    let params = render::table::parameter_pairs(&r.system);
    Ok(emit(
        &r,
        &args.output,
        &out,
        || render::table::equilibria_table(&a.equilibria, &params),
        || analysis_table(&r, &a),
    ))
}

/// The sizes against which q, p and H are rounding noise: the window's
/// extent and the spread of H over it.
fn noise_scales(a: &Analysis) -> (f64, f64, f64) {
    let w = &a.window;
    let q = w.qmin.abs().max(w.qmax.abs()).max(w.qmax - w.qmin);
    let p = w.pmin.abs().max(w.pmax.abs()).max(w.pmax - w.pmin);
    let h = a
        .grid
        .range
        .map_or(0.0, |(lo, hi)| lo.abs().max(hi.abs()).max(hi - lo));
    (q, p, h)
}

/// The analysis as readable tables.
pub fn analysis_table(r: &Resolved, a: &Analysis) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "H(q, p) = {}", r.session.formula);
    if !r.session.parameters.is_empty() {
        let list: Vec<String> = r
            .session
            .parameters
            .iter()
            .map(|p| format!("{} = {}", p.name, p.value))
            .collect();
        let _ = writeln!(out, "parameters: {}", list.join(", "));
    }
    let w = &a.window;
    let _ = writeln!(
        out,
        "window: q in [{}, {}], p in [{}, {}]",
        w.qmin, w.qmax, w.pmin, w.pmax
    );

    // rounding noise next to zero (a center at q = -3e-31) is written as 0
    let (qn, pn, hn) = noise_scales(a);
    let _ = writeln!(out, "\nEquilibria ({})", a.equilibria.len());
    let rows: Vec<Vec<String>> = a
        .equilibria
        .iter()
        .enumerate()
        .map(|(i, e)| {
            vec![
                format!("{}", i + 1),
                num(clean(e.q, qn)),
                num(clean(e.p, pn)),
                num(clean(e.energy, hn)),
                crate::scene::kind_name(e.kind).to_string(),
                format!(
                    "{}, {}",
                    complex(e.eigenvalues[0][0], e.eigenvalues[0][1]),
                    complex(e.eigenvalues[1][0], e.eigenvalues[1][1])
                ),
                e.frequency_shift.map_or("-".to_string(), |k| {
                    format!("{} ({})", num(k), crate::scene::shift_name(k))
                }),
            ]
        })
        .collect();
    if rows.is_empty() {
        let _ = writeln!(out, "  none in view");
    } else {
        table(
            &mut out,
            &[
                "#",
                "q",
                "p",
                "E",
                "kind",
                "eigenvalues",
                "κ in ω ≈ ω0 + κA²",
            ],
            &rows,
        );
    }

    let _ = writeln!(out, "\nWells ({})", a.wells.len());
    let rows: Vec<Vec<String>> = a
        .wells
        .iter()
        .map(|wl| {
            vec![
                format!("#{}", wl.center + 1),
                num(clean(wl.q, qn)),
                num(clean(wl.p, pn)),
                num(clean(wl.energy, hn)),
                wl.escape_energy
                    .map_or("none in view".to_string(), |e| num(clean(e, hn))),
                wl.depth.map_or("-".to_string(), num),
                wl.escape_saddle
                    .map_or("-".to_string(), |s| format!("#{}", s + 1)),
                wl.edge_energy.map_or("-".to_string(), num),
            ]
        })
        .collect();
    if rows.is_empty() {
        let _ = writeln!(out, "  none");
    } else {
        table(
            &mut out,
            &[
                "center",
                "q",
                "p",
                "E",
                "escape energy",
                "depth",
                "via saddle",
                "meets edge at E",
            ],
            &rows,
        );
    }

    let _ = writeln!(out, "\nSeparatrix connections ({})", a.connections.len());
    let rows: Vec<Vec<String>> = a
        .connections
        .iter()
        .map(|c| {
            vec![
                format!("{:?}", c.kind).to_lowercase(),
                format!("#{}", c.from + 1),
                format!("#{}", c.to + 1),
                num(c.energy),
            ]
        })
        .collect();
    if rows.is_empty() {
        let _ = writeln!(out, "  none");
    } else {
        table(&mut out, &["kind", "from", "to", "E"], &rows);
    }

    if !a.diagnostics.is_empty() || a.cancelled {
        let _ = writeln!(out, "\nDiagnostics");
        for d in &a.diagnostics {
            let _ = writeln!(out, "  {:?}: {}", d.severity, d.message);
        }
        if a.cancelled {
            let _ = writeln!(out, "  the analysis was stopped early; results are partial");
        }
    }
    out
}
