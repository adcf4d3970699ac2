//! Every example session in sessions/ loads without error or warning and its
//! analysis finds the equilibria that the closed forms of its model predict.

use phasewright::core::Cancel;
use phasewright::core::analysis::{Analysis, analyze};
use phasewright::core::equilibria::EquilibriumKind::{self, Center, Saddle};
use phasewright::session::{self, Session};
use std::f64::consts::PI;
use std::path::PathBuf;

fn example_files() -> Vec<PathBuf> {
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("sessions");
    let mut files: Vec<PathBuf> = std::fs::read_dir(&dir)
        .expect("sessions/ exists")
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "json"))
        // the format's schema lives beside the examples
        .filter(|p| !p.to_string_lossy().ends_with(".schema.json"))
        .collect();
    files.sort();
    files
}

fn load(name: &str) -> (Session, Analysis) {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("sessions")
        .join(name);
    let (s, warnings) = session::load_file(&path).unwrap_or_else(|e| panic!("{name}: {e}"));
    assert!(warnings.is_empty(), "{name}: {warnings:?}");
    let sys = s.system().unwrap_or_else(|e| panic!("{name}: {e}"));
    let a = analyze(&sys, &s.view, &s.analysis_config(), &Cancel::never());
    (s, a)
}

fn param(s: &Session, name: &str) -> f64 {
    s.parameter(name)
        .unwrap_or_else(|| panic!("parameter {name}"))
        .value
}

/// The three real roots of x³ + a·x + b = 0 (a < 0, three real roots), by
/// Viète's trigonometric formula (standard algebra; e.g. Abramowitz & Stegun 3.8.2).
fn cubic_roots(a: f64, b: f64) -> [f64; 3] {
    let m = 2.0 * (-a / 3.0).sqrt();
    let theta = (3.0 * b / (a * m)).acos() / 3.0;
    let mut r = [0, 1, 2].map(|k| m * (theta - 2.0 * PI * k as f64 / 3.0).cos());
    r.sort_by(f64::total_cmp);
    r
}

/// The analysis has exactly these equilibria (on p = 0), in order of q.
fn assert_equilibria(name: &str, a: &Analysis, expected: &[(f64, EquilibriumKind)]) {
    let found: Vec<(f64, f64, EquilibriumKind)> =
        a.equilibria.iter().map(|e| (e.q, e.p, e.kind)).collect();
    assert_eq!(
        found.len(),
        expected.len(),
        "{name}: found {found:?}, expected {expected:?}"
    );
    for ((q, p, kind), (eq, ekind)) in found.iter().zip(expected) {
        assert!(
            (q - eq).abs() < 1e-7 && p.abs() < 1e-7,
            "{name}: equilibrium at ({q}, {p}), expected q = {eq}"
        );
        assert_eq!(kind, ekind, "{name}: kind at q = {q}");
    }
}

#[test]
fn there_are_at_least_five_examples() {
    assert!(example_files().len() >= 5, "{:?}", example_files());
}

#[test]
fn every_example_loads_analyses_and_has_notes_and_orbits() {
    for path in example_files() {
        let name = path.file_name().map(|n| n.to_string_lossy().into_owned());
        let name = name.unwrap_or_default();
        let (s, a) = load(&name);
        assert!(!s.title.is_empty(), "{name}: title");
        assert!(s.notes.len() > 100, "{name}: notes say what to look at");
        assert!(!s.orbits.is_empty(), "{name}: a seeded orbit");
        for o in &s.orbits {
            assert!(s.view.contains(o.q0, o.p0), "{name}: orbit starts in view");
        }
        assert!(!a.equilibria.is_empty(), "{name}: no equilibrium found");
        assert!(!a.cancelled);
        // A saved example reads back identically.
        let back = Session::from_json(&s.to_json_pretty()).expect("round trip");
        assert_eq!(back, s, "{name}");
    }
}

#[test]
fn structural_examples_carry_the_caution() {
    for name in [
        "biased-resonator.json",
        "loaded-strut.json",
        "imperfect-strut.json",
    ] {
        let (s, _) = load(name);
        assert!(s.notes.contains("idealisation"), "{name}");
        assert!(s.notes.contains("licensed engineering practice"), "{name}");
    }
}

#[test]
fn biased_resonator_has_a_saddle_node_pair_beside_the_origin() {
    // V = k q²/2 − b q³/3 + c q⁴/4, V' = q (k − b q + c q²): roots 0 and
    // (b ± √(b² − 4kc)) / 2c (quadratic formula).
    let (s, a) = load("biased-resonator.json");
    let (k, b, c) = (param(&s, "k"), param(&s, "b"), param(&s, "c"));
    let d = (b * b - 4.0 * k * c).sqrt();
    let saddle = (b - d) / (2.0 * c);
    let far = (b + d) / (2.0 * c);
    assert_equilibria(
        "biased-resonator",
        &a,
        &[(0.0, Center), (saddle, Saddle), (far, Center)],
    );
    // The well at the origin escapes over the saddle: escape energy V(saddle).
    let v = |q: f64| k * q * q / 2.0 - b * q.powi(3) / 3.0 + c * q.powi(4) / 4.0;
    let well = a
        .wells
        .iter()
        .find(|w| w.q.abs() < 1e-7)
        .expect("well at 0");
    let escape = well.escape_energy.expect("bounded by the saddle");
    assert!(
        (escape - v(saddle)).abs() < 1e-9,
        "{escape} vs {}",
        v(saddle)
    );
}

#[test]
fn loaded_strut_beyond_critical_load_has_the_pitchfork_pair() {
    // V = (1 − P) q²/2 + g q⁴/4: for P > 1, saddle at 0 and centers at
    // ±√((P − 1)/g), depth (P − 1)²/(4g) (closed form).
    let (s, a) = load("loaded-strut.json");
    let (load_p, g) = (param(&s, "P"), param(&s, "g"));
    let q = ((load_p - 1.0) / g).sqrt();
    assert_equilibria(
        "loaded-strut",
        &a,
        &[(-q, Center), (0.0, Saddle), (q, Center)],
    );
    let depth = (load_p - 1.0).powi(2) / (4.0 * g);
    assert_eq!(a.wells.len(), 2, "{:?}", a.wells);
    for w in &a.wells {
        assert!(
            (w.energy + depth).abs() < 1e-9,
            "well bottom {} vs {}",
            w.energy,
            -depth
        );
        let escape = w.escape_energy.expect("bounded by the saddle at 0");
        assert!(escape.abs() < 1e-9, "escape energy {escape}");
    }
}

#[test]
fn diatomic_bond_rests_at_r0_with_no_barrier() {
    // Morse: the only critical point is the minimum at r0, H = 0 (closed form).
    let (s, a) = load("diatomic-bond.json");
    let r0 = param(&s, "r0");
    assert_equilibria("diatomic-bond", &a, &[(r0, Center)]);
    assert!(a.equilibria[0].energy.abs() < 1e-12);
    // Small oscillations: ω = a·√(2D/μ) (harmonic limit of the Morse well).
    let omega = param(&s, "a") * (2.0 * param(&s, "D") / param(&s, "mu")).sqrt();
    let im = a.equilibria[0].eigenvalues[0][1].abs();
    assert!((im - omega).abs() < 1e-9 * omega, "{im} vs {omega}");
}

#[test]
fn barrier_crossing_has_two_wells_and_a_transition_state() {
    // V' = 4A q (q² − 1) − s = 0 ⇔ q³ − q − s/(4A) = 0.
    let (s, a) = load("barrier-crossing.json");
    let r = cubic_roots(-1.0, -param(&s, "s") / (4.0 * param(&s, "A")));
    assert_equilibria(
        "barrier-crossing",
        &a,
        &[(r[0], Center), (r[1], Saddle), (r[2], Center)],
    );
}

#[test]
fn tilted_lattice_has_centers_and_saddles_where_sine_equals_tilt() {
    // V' = V0 sin q − F = 0: centers at asin(F/V0) + 2πn, saddles at
    // π − asin(F/V0) + 2πn (closed form).
    let (s, a) = load("tilted-lattice.json");
    let phi = (param(&s, "F") / param(&s, "V0")).asin();
    let mut expected = Vec::new();
    for n in -2..=2 {
        let shift = 2.0 * PI * n as f64;
        expected.push((phi + shift, Center));
        expected.push((PI - phi + shift, Saddle));
    }
    expected.retain(|(q, _)| s.view.contains(*q, 0.0));
    expected.sort_by(|x, y| x.0.total_cmp(&y.0));
    assert_equilibria("tilted-lattice", &a, &expected);
}

#[test]
fn imperfect_strut_keeps_three_equilibria_shifted_by_the_bow() {
    // V' = (1 − P) q + g q³ − w = 0 ⇔ q³ + ((1 − P)/g) q − w/g = 0.
    let (s, a) = load("imperfect-strut.json");
    let (load_p, g, w) = (param(&s, "P"), param(&s, "g"), param(&s, "w"));
    let r = cubic_roots((1.0 - load_p) / g, -w / g);
    assert_equilibria(
        "imperfect-strut",
        &a,
        &[(r[0], Center), (r[1], Saddle), (r[2], Center)],
    );
}

/// The driven resonator's Melnikov threshold is the double well's closed
/// form F/δ = 4 cosh(πω/2)/(3√2 πω) at its ω = W (Guckenheimer & Holmes,
/// 1983, §4.5), and its notes quote the value.
#[test]
fn driven_resonator_threshold_is_the_closed_form_at_its_frequency() {
    let (s, _) = load("driven-resonator.json");
    let sys = s.system().unwrap();
    let req = phasewright::request::MelnikovRequest::from_session(&s, &sys).unwrap();
    let m = req.run(&sys, &s.view, &Cancel::never()).unwrap();
    let w = param(&s, "W");
    let want = 4.0 * (PI * w / 2.0).cosh() / (3.0 * 2f64.sqrt() * PI * w);
    let ratio = m.threshold_ratio.expect("a threshold");
    assert!((ratio - want).abs() < 1e-8 * want, "{ratio} vs {want}");
    let f = m.threshold_amplitude.unwrap();
    assert!(s.notes.contains(&format!("{f:.3}")), "notes quote {f:.3}");
    assert!(s.notes.contains("licensed engineering practice"));
}

/// Without damping the shaken lattice's threshold is 0: any shake opens a
/// layer (the Melnikov function always has simple zeros; G&H §4.5).
#[test]
fn shaken_lattice_has_no_threshold_without_damping() {
    let (s, _) = load("shaken-lattice.json");
    let sys = s.system().unwrap();
    let req = phasewright::request::MelnikovRequest::from_session(&s, &sys).unwrap();
    let m = req.run(&sys, &s.view, &Cancel::never()).unwrap();
    assert!(!m.connections.is_empty());
    assert_eq!(m.threshold_amplitude, Some(0.0));
    for c in &m.connections {
        assert_eq!(c.zeros.len(), 2, "two simple zeros per period");
    }
}

#[test]
fn bond_ladder_binds_the_morse_count_of_levels() {
    // Morse V = D(1 − e^(−a(q − r0)))², mass μ: E_n = ħω(n + ½) − [ħω(n + ½)]²/(4D),
    // ω = a√(2D/μ), and ⌊√(2μD)/(aħ) + ½⌋ bound levels (P. M. Morse, Phys. Rev.
    // 34 (1929) 57). The view reaches far enough right that all of them lie
    // below the level where the well opens at its edge.
    use phasewright::request::{LevelsRequest, centers_in_view};
    let (s, _) = load("bond-ladder.json");
    let (d, a, mu) = (param(&s, "D"), param(&s, "a"), param(&s, "mu"));
    let hbar = s.hbar().expect("ħ").expect("a quantum section");
    assert_eq!(hbar, param(&s, "h"));
    let count = ((2.0 * mu * d).sqrt() / (a * hbar) + 0.5).floor() as usize;
    assert_eq!(count, 12, "a dozen levels");
    let sys = s.system().expect("system");
    let centers = centers_in_view(&s, &sys, &s.view, &Cancel::never());
    let req = LevelsRequest::from_session(&s, &centers)
        .expect("ħ")
        .expect("levels");
    let out = req.run(&sys, &s.view, &Cancel::never());
    assert!(out.refused.is_empty(), "{:?}", out.refused);
    assert_eq!(out.wells.len(), 1);
    let w = &out.wells[0];
    assert_eq!(w.count, count);
    assert_eq!(w.levels.len(), count);
    let omega = a * (2.0 * d / mu).sqrt();
    for l in &w.levels {
        let x = hbar * omega * (l.n as f64 + 0.5);
        assert!(
            (l.energy - (x - x * x / (4.0 * d))).abs() < 1e-10,
            "n = {}",
            l.n
        );
    }
    assert!(s.notes.contains("estimates"));
    assert!(s.notes.contains("not spectroscopic values"));
}
