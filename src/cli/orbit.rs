//! `orbit`: one orbit from (q0, p0) with its period, action and energy error.

use super::*;

/// Arguments of `orbit`.
#[derive(Debug, Clone, Args)]
pub struct OrbitArgs {
    #[command(flatten)]
    pub system: SystemArgs,
    /// Start coordinate (default: the session's first seeded orbit).
    #[arg(long, allow_negative_numbers = true)]
    pub q0: Option<f64>,
    /// Start momentum (default: the session's first seeded orbit).
    #[arg(long, allow_negative_numbers = true)]
    pub p0: Option<f64>,
    /// Integration time (negative integrates backward). Without it the orbit
    /// runs until it closes, for at most 100 local periods.
    #[arg(long, allow_negative_numbers = true)]
    pub duration: Option<f64>,
    /// Integration method: auto, verlet, yoshida4, yoshida6, nystrom4, nystrom6, split4,
    /// split6, midpoint, gauss4, gauss6, dormand-prince (older spelling: dopri5).
    #[arg(long, value_name = "NAME")]
    pub method: Option<String>,
    /// Fixed step size (default: from the local time scale).
    #[arg(long, value_name = "DT")]
    pub step: Option<f64>,
    /// `--json` prints the measurements as JSON; `--csv` prints the samples (t,q,p,H).
    #[command(flatten)]
    pub output: OutputArgs,
}

/// `orbit`: integrate one orbit and print its measurements or samples.
pub fn run_orbit(args: &OrbitArgs) -> Result<String, CliError> {
    let r = args.system.resolve()?;
    print_warnings(&r.warnings);
    let seeded = r.session.orbits.first();
    let (q0, p0) = match (args.q0, args.p0, seeded) {
        (Some(q), Some(p), _) => (q, p),
        (q, p, Some(o)) => (q.unwrap_or(o.q0), p.unwrap_or(o.p0)),
        _ => {
            return Err(CliError(
                "give the start point with --q0 X --p0 Y (the session seeds no orbit)".to_string(),
            ));
        }
    };
    let method_name = match (&args.method, seeded) {
        (Some(m), _) => m.clone(),
        (None, Some(o)) if args.q0.is_none() && args.p0.is_none() => o.method.clone(),
        _ => "auto".to_string(),
    };
    let method = Method::from_name(&method_name).map_err(|e| CliError(format!("--method: {e}")))?;
    let seeded_duration = seeded
        .filter(|_| args.q0.is_none() && args.p0.is_none())
        .map(|o| o.duration);
    let duration = args.duration.or(seeded_duration);
    let mut req = OrbitRequest::new(
        q0,
        p0,
        duration.unwrap_or_else(|| default_duration(&r.system, q0, p0, 0.0)),
        &r.window,
    );
    req.method = method;
    req.step = args.step;
    req.stop_when_closed = duration.is_none();
    req.validate().map_err(|e| {
        let flag = match e.field {
            "q0" => "--q0",
            "p0" => "--p0",
            "q0, p0" => "--q0/--p0",
            "duration" => "--duration",
            "step" => "--step",
            other => other,
        };
        CliError(format!("{flag}: {}", e.problem))
    })?;
    let orbit = integrate_orbit(&r.system, &req, &Cancel::never());
    if let StopReason::InvalidRequest { problem } = &orbit.stop {
        return Err(CliError(format!("--method {method_name}: {problem}")));
    }
    Ok(emit(
        &r,
        &args.output,
        &orbit_measurements(&orbit, q0, p0),
        || render::table::orbit_samples_table(&orbit),
        || orbit_table(&r, &orbit, q0, p0),
    ))
}

/// The orbit's measurements for JSON (samples left out; see `--csv`).
pub(super) fn orbit_measurements(orbit: &Orbit, q0: f64, p0: f64) -> serde_json::Value {
    serde_json::json!({
        "q0": q0,
        "p0": p0,
        "method": orbit.method,
        "step": orbit.step,
        "period": orbit.period,
        "action": orbit.action,
        "frequency": orbit.frequency,
        "closed": orbit.closed,
        "motion": orbit.motion,
        "q_advance": orbit.q_advance,
        "q_range": orbit.q_range,
        "p_range": orbit.p_range,
        "energy": orbit.energy,
        "energy_error": orbit.energy_error,
        "energy_scale": orbit.energy_scale,
        "relative_energy_error": orbit.relative_energy_error,
        "stop_reason": orbit.stop.name(),
        "stop_message": orbit.stop.message(),
        "steps": orbit.steps,
        "field_evaluations": orbit.field_evaluations,
        "hessian_evaluations": orbit.hessian_evaluations,
        "samples": orbit.samples.len(),
        "diagnostics": orbit.diagnostics,
    })
}

/// The orbit's measurements as readable lines.
pub fn orbit_table(r: &Resolved, orbit: &Orbit, q0: f64, p0: f64) -> String {
    let mut out = String::new();
    let opt = |v: Option<f64>| v.map_or("none".to_string(), |x| format!("{x}"));
    let _ = writeln!(out, "H(q, p) = {}", r.session.formula);
    let _ = writeln!(
        out,
        "start: q0 = {q0}, p0 = {p0}, E = {}",
        num(orbit.energy)
    );
    let _ = writeln!(out, "method: {}, step {}", orbit.method, num(orbit.step));
    let rows = vec![
        vec!["period".to_string(), opt(orbit.period)],
        vec!["frequency".to_string(), opt(orbit.frequency)],
        vec!["action".to_string(), opt(orbit.action)],
        vec![
            "motion".to_string(),
            format!("{:?}", orbit.motion).to_lowercase(),
        ],
        vec![
            "q range".to_string(),
            format!("{} .. {}", num(orbit.q_range[0]), num(orbit.q_range[1])),
        ],
        vec![
            "p range".to_string(),
            format!("{} .. {}", num(orbit.p_range[0]), num(orbit.p_range[1])),
        ],
        vec![
            "energy error".to_string(),
            format!(
                "{:.3e} (relative {:.3e})",
                orbit.energy_error, orbit.relative_energy_error
            ),
        ],
        vec!["steps".to_string(), orbit.steps.to_string()],
        vec![
            "field evaluations".to_string(),
            orbit.field_evaluations.to_string(),
        ],
        vec!["stopped".to_string(), orbit.stop.message()],
    ];
    table(&mut out, &["quantity", "value"], &rows);
    for d in &orbit.diagnostics {
        let _ = writeln!(out, "note: {}", d.message);
    }
    out
}
