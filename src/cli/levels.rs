//! `levels`: the Bohr–Sommerfeld levels of every well in view, their count
//! and spacings, and the tunnelling splitting where it applies.

use super::{
    CliError, OutputArgs, Resolved, SystemArgs, diagnostics_text, emit, num, print_warnings, table,
};
use crate::core::Cancel;
use crate::render;
use crate::request::{LevelsRequest, LevelsResult, centers_in_view};
use crate::session::QuantumSettings;
use clap::Args;
use std::fmt::Write as _;

/// The caution printed with every list of levels.
pub const CAUTION: &str = "Semiclassical estimates for an idealised model, not measured or \
                           spectroscopic values.";

/// Arguments of `levels`.
#[derive(Debug, Clone, Args)]
pub struct LevelsArgs {
    #[command(flatten)]
    pub system: SystemArgs,
    /// Planck's constant ħ: a number or an expression over the parameters,
    /// e.g. 0.1 or "0.05*k" (default: the session's quantum.hbar).
    #[arg(long, value_name = "EXPR", allow_hyphen_values = true)]
    pub hbar: Option<String>,
    #[command(flatten)]
    pub output: OutputArgs,
}

/// `levels`: per well in view, the levels Eₙ with I(Eₙ) = ħ(n + ½) below the
/// escape energy (or the window's edge), their count and spacings, and the
/// splitting of the lowest pair of a symmetric double well.
pub fn run_levels(args: &LevelsArgs) -> Result<String, CliError> {
    let mut r = args.system.resolve()?;
    if let Some(h) = &args.hbar {
        r.session.quantum = Some(QuantumSettings { hbar: h.clone() });
    }
    print_warnings(&r.warnings);
    let cancel = Cancel::never();
    let in_view = centers_in_view(&r.session, &r.system, &r.window, &cancel);
    let request = LevelsRequest::from_session(&r.session, &in_view)
        .map_err(|e| match &args.hbar {
            Some(h) => CliError(format!("--hbar {h}: {}", e.problem)),
            None => CliError(format!("levels: {e}")),
        })?
        .ok_or_else(|| {
            CliError(
                "levels: no ħ; give --hbar EXPR (e.g. --hbar 0.1) or add \
                 \"quantum\": { \"hbar\": \"0.1\" } to the session"
                    .to_string(),
            )
        })?;
    if in_view.is_empty() {
        return Err(CliError(
            "levels: there is no center in view, so no well to quantize; widen --window"
                .to_string(),
        ));
    }
    let result = request.run(&r.system, &r.window, &cancel);
    if result.wells.is_empty() {
        let problems: Vec<String> = result
            .refused
            .iter()
            .map(|w| {
                format!(
                    "center q = {}, p = {}: {}",
                    num(w.center[0]),
                    num(w.center[1]),
                    w.problem
                )
            })
            .collect();
        return Err(CliError(format!(
            "levels: no well gave levels; {}",
            problems.join("; ")
        )));
    }
    Ok(emit(
        &r,
        &args.output,
        &result,
        || render::table::levels_table(&result),
        || levels_text(&r, &result),
    ))
}

/// The levels as readable tables, one per well.
fn levels_text(r: &Resolved, res: &LevelsResult) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "H(q, p) = {}", r.session.formula);
    let _ = writeln!(out, "ħ = {}", num(res.hbar));
    let _ = writeln!(out, "{CAUTION}");
    for (i, w) in res.wells.iter().enumerate() {
        let _ = writeln!(
            out,
            "\nWell {} — center q = {}, p = {}, H = {}",
            i + 1,
            num(w.center[0]),
            num(w.center[1]),
            num(w.center_energy)
        );
        match w.escape_energy {
            Some(e) => {
                let _ = writeln!(out, "escape energy: {}", num(e));
            }
            None => {
                let _ = writeln!(
                    out,
                    "no saddle bounds the well in view; it opens at the window's edge at H = {}",
                    num(w.top_energy)
                );
            }
        }
        let _ = writeln!(
            out,
            "{} bound level{} (I(E_top) = {} = {} ħ)",
            w.count,
            if w.count == 1 { "" } else { "s" },
            num(w.top_action),
            num(w.top_action / res.hbar)
        );
        let e0 = w.levels.first().map_or(0.0, |l| l.energy);
        let rows: Vec<Vec<String>> = w
            .levels
            .iter()
            .map(|l| {
                vec![
                    l.n.to_string(),
                    num(l.energy),
                    num(l.energy - e0),
                    l.spacing.map_or(String::new(), num),
                    num(l.period),
                ]
            })
            .collect();
        if !rows.is_empty() {
            table(
                &mut out,
                &["n", "energy", "E - E0", "spacing", "period"],
                &rows,
            );
        }
        if let Some(s) = &w.splitting {
            let _ = writeln!(
                out,
                "tunnelling splitting of the lowest pair (with the well at q = {}): \
                 ΔE ≈ {} (S/ħ = {}; an estimate)",
                num(s.partner[0]),
                num(s.splitting),
                num(s.exponent)
            );
        }
        diagnostics_text(&mut out, &w.diagnostics, w.cancelled);
    }
    for w in &res.refused {
        let _ = writeln!(
            out,
            "\ncenter q = {}, p = {}: no levels: {}",
            num(w.center[0]),
            num(w.center[1]),
            w.problem
        );
    }
    out
}
