//! `sweep`, `folds` and `backbone`: the pane views on the command line, each
//! through its request (see `crate::request`).

use super::*;

/// Which sweep: flags that replace the session's `sweep` settings.
#[derive(Debug, Clone, Default, Args)]
pub struct SweepFlags {
    /// The parameter that moves (default: the session's sweep).
    #[arg(long, value_name = "NAME")]
    pub param: Option<String>,
    /// Where the parameter starts (default: the session's sweep).
    #[arg(long, value_name = "A", allow_hyphen_values = true)]
    pub from: Option<String>,
    /// Where the parameter ends (default: the session's sweep).
    #[arg(long, value_name = "B", allow_hyphen_values = true)]
    pub to: Option<String>,
}

/// Which fold curves: flags that replace the session's `folds` settings.
#[derive(Debug, Clone, Default, Args)]
pub struct FoldFlags {
    /// The two parameters: NAME1,NAME2 (default: the session's folds).
    #[arg(long, value_name = "NAME1,NAME2")]
    pub params: Option<String>,
    /// The parameter box [A1, B1] × [A2, B2]: A1,B1,A2,B2 (default: the session's folds).
    #[arg(long = "box", value_name = "A1,B1,A2,B2", allow_hyphen_values = true)]
    pub bounds: Option<String>,
}

/// Which backbone: flags that replace the session's `backbone` settings.
#[derive(Debug, Clone, Default, Args)]
pub struct BackboneFlags {
    /// A point near the center of the well: Q,P (default: the session's
    /// backbone, else the first center in view).
    #[arg(long, value_name = "Q,P", allow_hyphen_values = true)]
    pub center: Option<String>,
    /// Energies sampled, the center's included (default: the session's, else 200).
    #[arg(long, value_name = "N")]
    pub energies: Option<usize>,
}

/// Arguments of `sweep`.
#[derive(Debug, Clone, Args)]
pub struct SweepArgs {
    #[command(flatten)]
    pub system: SystemArgs,
    #[command(flatten)]
    pub sweep: SweepFlags,
    #[command(flatten)]
    pub output: OutputArgs,
}

/// Arguments of `folds`.
#[derive(Debug, Clone, Args)]
pub struct FoldsArgs {
    #[command(flatten)]
    pub system: SystemArgs,
    #[command(flatten)]
    pub folds: FoldFlags,
    #[command(flatten)]
    pub output: OutputArgs,
}

/// Arguments of `backbone`.
#[derive(Debug, Clone, Args)]
pub struct BackboneArgs {
    #[command(flatten)]
    pub system: SystemArgs,
    #[command(flatten)]
    pub backbone: BackboneFlags,
    #[command(flatten)]
    pub output: OutputArgs,
}

impl SweepFlags {
    /// Replace the session's sweep settings with the flags given; the rest
    /// come from the session. All three must be known in the end.
    pub fn apply(&self, session: &mut Session) -> Result<(), CliError> {
        if self.param.is_none() && self.from.is_none() && self.to.is_none() {
            return Ok(());
        }
        let base = session.sweep.clone();
        let from = match &self.from {
            Some(t) => Some(parse_one("from", t, "A")?),
            None => base.as_ref().map(|b| b.from),
        };
        let to = match &self.to {
            Some(t) => Some(parse_one("to", t, "B")?),
            None => base.as_ref().map(|b| b.to),
        };
        let param = self
            .param
            .clone()
            .or(base.as_ref().map(|b| b.param.clone()));
        match (param, from, to) {
            (Some(param), Some(from), Some(to)) => {
                known_parameter(session, "--param", &param)?;
                session.sweep = Some(SweepSettings {
                    param,
                    from,
                    to,
                    max_step: base.and_then(|b| b.max_step),
                });
                Ok(())
            }
            (param, from, to) => {
                let missing: Vec<&str> = [
                    param.is_none().then_some("--param NAME"),
                    from.is_none().then_some("--from A"),
                    to.is_none().then_some("--to B"),
                ]
                .into_iter()
                .flatten()
                .collect();
                Err(CliError(format!(
                    "the session has no sweep settings to complete the flags; also give {}",
                    missing.join(" ")
                )))
            }
        }
    }
}

impl FoldFlags {
    /// Replace the session's fold-curve settings with the flags given.
    pub fn apply(&self, session: &mut Session) -> Result<(), CliError> {
        if self.params.is_none() && self.bounds.is_none() {
            return Ok(());
        }
        let base = session.folds.clone();
        let params = match &self.params {
            Some(text) => {
                let names: Vec<&str> = text.split(',').map(str::trim).collect();
                if names.len() != 2 || names.iter().any(|n| n.is_empty()) {
                    return Err(CliError(format!(
                        "--params {text}: expected two parameter names NAME1,NAME2"
                    )));
                }
                Some([names[0].to_string(), names[1].to_string()])
            }
            None => base.as_ref().map(|b| b.params.clone()),
        };
        let bounds = match &self.bounds {
            Some(text) => {
                let b = parse_numbers("box", text, 4, "A1,B1,A2,B2")?;
                Some([b[0], b[1], b[2], b[3]])
            }
            None => base.as_ref().map(|b| b.bounds),
        };
        match (params, bounds) {
            (Some(params), Some(bounds)) => {
                for name in &params {
                    known_parameter(session, "--params", name)?;
                }
                session.folds = Some(FoldSettings { params, bounds });
                Ok(())
            }
            (None, _) => Err(CliError(
                "the session has no fold-curve settings to complete --box; also give --params NAME1,NAME2"
                    .to_string(),
            )),
            (_, None) => Err(CliError(
                "the session has no fold-curve settings to complete --params; also give --box A1,B1,A2,B2"
                    .to_string(),
            )),
        }
    }
}

impl BackboneFlags {
    /// Replace the session's backbone settings with the flags given.
    pub fn apply(&self, session: &mut Session) -> Result<(), CliError> {
        if self.center.is_none() && self.energies.is_none() {
            return Ok(());
        }
        let mut b = session.backbone.clone().unwrap_or_default();
        if let Some(text) = &self.center {
            let c = parse_numbers("center", text, 2, "Q,P")?;
            b.center = Some([c[0], c[1]]);
        }
        if let Some(n) = self.energies {
            let (lo, hi) = (
                session::MIN_BACKBONE_ENERGIES,
                session::MAX_BACKBONE_ENERGIES,
            );
            if !(lo..=hi).contains(&n) {
                return Err(CliError(format!(
                    "--energies {n}: expected a whole number in {lo}..={hi}"
                )));
            }
            b.energies = Some(n);
        }
        session.backbone = Some(BackboneSettings { ..b });
        Ok(())
    }

    /// How a refused backbone is introduced: by the flag that chose the center, if any.
    pub(super) fn command(&self) -> String {
        self.center
            .as_ref()
            .map_or("backbone".to_string(), |c| format!("--center {c}"))
    }
}

/// `sweep`: the equilibria as one parameter moves, with bifurcations.
pub fn run_sweep(args: &SweepArgs) -> Result<String, CliError> {
    run_view(
        &args.system,
        &args.output,
        |s| args.sweep.apply(s),
        "sweep",
        render::sweep_of,
        render::table::sweep_table,
        sweep_text,
    )
}

/// `folds`: fold curves in two parameters.
pub fn run_folds(args: &FoldsArgs) -> Result<String, CliError> {
    run_view(
        &args.system,
        &args.output,
        |s| args.folds.apply(s),
        "folds",
        render::folds_of,
        render::table::folds_table,
        folds_text,
    )
}

/// `backbone`: period, frequency, action and amplitude against energy.
pub fn run_backbone(args: &BackboneArgs) -> Result<String, CliError> {
    run_view(
        &args.system,
        &args.output,
        |s| args.backbone.apply(s),
        &args.backbone.command(),
        |s, sys, w, c| render::backbone_of(s, sys, w, &Overrides::default(), c),
        render::table::backbone_table,
        backbone_text,
    )
}

/// The shape every pane view's subcommand shares: resolve the system, put
/// the flags' settings in the session, compute the view, and print it.
fn run_view<T: serde::Serialize>(
    system: &SystemArgs,
    output: &OutputArgs,
    settle: impl FnOnce(&mut Session) -> Result<(), CliError>,
    command: &str,
    run: impl FnOnce(&Session, &System, &Window, &Cancel) -> Result<T, ViewError>,
    table: impl FnOnce(&T) -> Table,
    text: impl FnOnce(&Resolved, &T) -> String,
) -> Result<String, CliError> {
    let mut r = system.resolve()?;
    settle(&mut r.session)?;
    print_warnings(&r.warnings);
    let result = compute(&r, command, run)?;
    Ok(emit(
        &r,
        output,
        &result,
        || table(&result),
        || text(&r, &result),
    ))
}

/// A sweep as readable tables.
pub(super) fn sweep_text(r: &Resolved, s: &Sweep) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "H(q, p) = {}", r.session.formula);
    let _ = writeln!(out, "{} from {} to {}", s.param, s.from, s.to);
    let _ = writeln!(out, "\nBifurcations ({})", s.bifurcations.len());
    let rows: Vec<Vec<String>> = s
        .bifurcations
        .iter()
        .map(|b| {
            vec![
                b.kind.name().to_string(),
                num(b.param),
                num(b.q),
                num(b.p),
                num(b.energy),
            ]
        })
        .collect();
    if rows.is_empty() {
        let _ = writeln!(out, "  none in range");
    } else {
        table(&mut out, &["kind", &s.param, "q", "p", "E"], &rows);
    }
    let _ = writeln!(out, "\nBranches ({})", s.branches.len());
    let rows: Vec<Vec<String>> = s
        .branches
        .iter()
        .enumerate()
        .filter_map(|(i, b)| {
            let (first, last) = (b.points.first()?, b.points.last()?);
            Some(vec![
                format!("{}", i + 1),
                crate::scene::kind_name(b.kind).to_string(),
                format!("{}", b.points.len()),
                format!("({}, {})", num(first.param), num(first.q)),
                format!("({}, {})", num(last.param), num(last.q)),
            ])
        })
        .collect();
    if rows.is_empty() {
        let _ = writeln!(out, "  none");
    } else {
        let from = format!("from ({}, q)", s.param);
        let to = format!("to ({}, q)", s.param);
        table(&mut out, &["#", "kind", "points", &from, &to], &rows);
    }
    diagnostics_text(&mut out, &s.diagnostics, s.cancelled);
    out
}

/// Fold curves as readable tables.
pub(super) fn folds_text(r: &Resolved, f: &FoldCurves) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "H(q, p) = {}", r.session.formula);
    let _ = writeln!(
        out,
        "{} in [{}, {}], {} in [{}, {}]",
        f.params[0], f.bounds[0], f.bounds[1], f.params[1], f.bounds[2], f.bounds[3]
    );
    let _ = writeln!(out, "\nFold curves ({})", f.curves.len());
    let rows: Vec<Vec<String>> = f
        .curves
        .iter()
        .enumerate()
        .filter_map(|(i, c)| {
            let (first, last) = (c.points.first()?, c.points.last()?);
            Some(vec![
                format!("{}", i + 1),
                format!("{}", c.points.len()),
                if c.closed { "closed" } else { "open" }.to_string(),
                format!("({}, {})", num(first.params[0]), num(first.params[1])),
                format!("({}, {})", num(last.params[0]), num(last.params[1])),
            ])
        })
        .collect();
    if rows.is_empty() {
        let _ = writeln!(out, "  none in the box");
    } else {
        let from = format!("from ({}, {})", f.params[0], f.params[1]);
        let to = format!("to ({}, {})", f.params[0], f.params[1]);
        table(&mut out, &["#", "points", "shape", &from, &to], &rows);
    }
    let _ = writeln!(out, "\nCusps ({})", f.cusps.len());
    let rows: Vec<Vec<String>> = f
        .cusps
        .iter()
        .map(|c| {
            vec![
                num(c.params[0]),
                num(c.params[1]),
                num(c.q),
                num(c.p),
                num(c.energy),
            ]
        })
        .collect();
    if rows.is_empty() {
        let _ = writeln!(out, "  none");
    } else {
        table(
            &mut out,
            &[&f.params[0], &f.params[1], "q", "p", "E"],
            &rows,
        );
    }
    diagnostics_text(&mut out, &f.diagnostics, f.cancelled);
    out
}

/// A backbone as readable tables.
pub(super) fn backbone_text(r: &Resolved, b: &Backbone) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "H(q, p) = {}", r.session.formula);
    let _ = writeln!(
        out,
        "center q = {}, p = {}, E = {}",
        num(b.center[0]),
        num(b.center[1]),
        num(b.center_energy)
    );
    let _ = writeln!(
        out,
        "escape energy: {}",
        b.escape_energy.map_or("none in view".to_string(), num)
    );
    if let Some(shift) = &b.frequency_shift {
        let _ = writeln!(out, "{}", crate::scene::shift_text(shift));
    }
    let _ = writeln!(out, "\nBackbone ({} energies)", b.rows.len());
    let rows: Vec<Vec<String>> = b
        .rows
        .iter()
        .map(|w| {
            vec![
                num(w.energy),
                num(w.period),
                num(w.frequency),
                num(w.action),
                num(w.amplitude),
            ]
        })
        .collect();
    table(
        &mut out,
        &["energy", "period", "frequency", "action", "amplitude"],
        &rows,
    );
    diagnostics_text(&mut out, &b.diagnostics, b.cancelled);
    out
}
