//! `levels`: the Bohr–Sommerfeld levels of every well in view, their count
//! and spacings, and the tunnelling splitting where it applies.

use super::{
    CliError, OutputArgs, Resolved, SystemArgs, compute, diagnostics_text, emit, num,
    print_warnings, table,
};
use crate::render;
use crate::request::LevelsResult;
use crate::session::{QuantumSettings, Session};
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
    let command = apply_hbar(&mut r.session, args.hbar.as_deref(), "levels");
    print_warnings(&r.warnings);
    let result = compute(&r, &command, render::levels_of)?;
    Ok(emit(
        &r,
        &args.output,
        &result,
        || render::table::levels_table(&result),
        || levels_text(&r, &result),
    ))
}

/// Replace the session's ħ with the `--hbar` flag, if given; returns how a
/// refusal is introduced (the flag, else `otherwise`).
pub(super) fn apply_hbar(session: &mut Session, hbar: Option<&str>, otherwise: &str) -> String {
    match hbar {
        Some(h) => {
            let on_portrait = session.quantum.as_ref().is_none_or(|q| q.on_portrait);
            session.quantum = Some(QuantumSettings {
                on_portrait,
                ..QuantumSettings::new(h)
            });
            format!("--hbar {h}")
        }
        None => otherwise.to_string(),
    }
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
            "\nWell {} — center q = {}, p = {}, E = {}",
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
                    "no saddle bounds the well in view; it opens at the window's edge at E = {}",
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
