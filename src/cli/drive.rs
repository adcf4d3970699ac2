//! The driven views on the command line: `melnikov` (and the flags that
//! give a drive to a session without one).

use super::*;
use crate::core::melnikov::Melnikov;

/// Which drive: flags that replace the session's `drive` settings.
#[derive(Debug, Clone, Default, Args)]
pub struct DriveFlags {
    /// The drive period, an expression over the parameters, e.g. "2*pi/W"
    /// (default: the session's drive).
    #[arg(long, value_name = "EXPR", allow_hyphen_values = true)]
    pub period: Option<String>,
    /// The linear damping rate δ ≥ 0, an expression over the parameters
    /// (default: the session's drive, else none).
    #[arg(long, value_name = "EXPR", allow_hyphen_values = true)]
    pub damping: Option<String>,
    /// The parameter that sets the drive's strength (default: the session's,
    /// else the one parameter in which H is affine and whose 0 removes t).
    #[arg(long, value_name = "NAME")]
    pub amplitude: Option<String>,
}

impl DriveFlags {
    /// Put the flags given into the session's drive (creating one) and check
    /// the result, with the flags' names in the messages.
    pub fn apply(&self, session: &mut Session) -> Result<(), CliError> {
        if self.period.is_none() && self.damping.is_none() && self.amplitude.is_none() {
            return Ok(());
        }
        let mut d = session.drive.clone().unwrap_or_default();
        d.enabled = true;
        if let Some(p) = &self.period {
            d.period = p.clone();
        }
        if let Some(x) = &self.damping {
            d.damping = Some(x.clone());
        }
        if let Some(a) = &self.amplitude {
            known_parameter(session, "--amplitude", a)?;
            d.amplitude = Some(a.clone());
        }
        if d.period.trim().is_empty() {
            return Err(CliError(
                "--period: give the drive period, e.g. --period \"2*pi/W\"".to_string(),
            ));
        }
        session.drive = Some(d);
        session.drive().map_err(|e| {
            let flag = match e.field.as_str() {
                "drive.period" => "--period",
                "drive.damping" => "--damping",
                other => other,
            };
            CliError(format!("{flag}: {}", e.problem))
        })?;
        Ok(())
    }
}

/// The system with the drive flags put into its session; the warning that
/// a formula in t is frozen is dropped once a drive is given.
pub(super) fn resolve_driven(
    system: &SystemArgs,
    drive: &DriveFlags,
) -> Result<Resolved, CliError> {
    let mut r = system.resolve()?;
    drive.apply(&mut r.session)?;
    if r.session.drive.is_some() {
        r.warnings
            .retain(|w| w != crate::session::drive::FROZEN_TIME_WARNING);
    }
    Ok(r)
}

/// Arguments of `melnikov`.
#[derive(Debug, Clone, Args)]
pub struct MelnikovArgs {
    #[command(flatten)]
    pub system: SystemArgs,
    #[command(flatten)]
    pub drive: DriveFlags,
    /// `--json` prints everything as JSON; `--csv` prints M(t0) samples.
    #[command(flatten)]
    pub output: OutputArgs,
}

/// `melnikov`: M(t₀) along every separatrix connection of the undriven H,
/// its zeros and the threshold drive amplitude.
pub fn run_melnikov(args: &MelnikovArgs) -> Result<String, CliError> {
    let r = resolve_driven(&args.system, &args.drive)?;
    print_warnings(&r.warnings);
    let m = render::melnikov_of(&r.session, &r.system, &r.window, &Cancel::never())
        .map_err(|e| view_error(&e, "melnikov"))?;
    Ok(emit(
        &r,
        &args.output,
        &m,
        || render::table::melnikov_table(&m),
        || melnikov_text(&r, &m),
    ))
}

/// The Melnikov analysis as readable text.
pub(super) fn melnikov_text(r: &Resolved, m: &Melnikov) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "H(q, p, t) = {}", r.session.formula);
    let _ = writeln!(
        out,
        "drive period {}, damping {}, amplitude {} = {}",
        num(m.period),
        num(m.damping),
        m.amplitude,
        num(m.amplitude_value)
    );
    let _ = writeln!(
        out,
        "\nConnections of the undriven H ({})",
        m.connections.len()
    );
    let rows: Vec<Vec<String>> = m
        .connections
        .iter()
        .enumerate()
        .map(|(k, c)| {
            vec![
                format!("{}", k + 1),
                format!(
                    "{} {}→{}",
                    render::table::connection_kind_name(c.kind),
                    c.from + 1,
                    c.to + 1
                ),
                num(c.energy),
                num(c.damping_integral),
                num(c.max_abs_m),
                num(c.threshold_amplitude),
                num(c.threshold_ratio),
                format!("{}", c.zeros.len()),
            ]
        })
        .collect();
    if rows.is_empty() {
        let _ = writeln!(
            out,
            "  none in view: the Melnikov function needs a separatrix"
        );
    } else {
        table(
            &mut out,
            &[
                "#",
                "connection (saddles)",
                "H0",
                "damping integral",
                "max |m|",
                "threshold amplitude",
                "threshold amplitude/damping",
                "zeros now",
            ],
            &rows,
        );
    }
    if let (Some(a), Some(ratio)) = (m.threshold_amplitude, m.threshold_ratio) {
        let _ = writeln!(
            out,
            "\nA chaotic layer near the separatrix is expected once {} exceeds {} \
             ({}/damping above {}); now {} = {}.",
            m.amplitude,
            num(a),
            m.amplitude,
            num(ratio),
            m.amplitude,
            num(m.amplitude_value)
        );
    }
    let _ = writeln!(
        out,
        "First-order estimate for a weak drive and light damping on a conservative model; \
         not a design margin."
    );
    out
}
