//! The session file: loading, every kind of bad file named by its field,
//! exact round trips, atomic saves, and a loader that never panics.

use phasewright::session::{
    self, FORMAT_NAME, FORMAT_VERSION, LevelSettings, MAX_DURATION, MAX_GRID, MAX_LEVELS,
    MAX_ORBITS, Parameter, SeededOrbit, Session, load, save_atomic, write_atomic,
};
use proptest::prelude::*;

const GOOD: &str = r##"{
  "format": "phasewright-session",
  "version": 1,
  "title": "tilted lattice",
  "notes": "look at the saddle",
  "formula": "p^2/2 - a*cos(q) - b*q",
  "parameters": [
    { "name": "a", "value": 1.0, "min": 0.0, "max": 2.0, "step": 0.01 },
    { "name": "b", "value": 0.1, "min": -1.0, "max": 1.0 }
  ],
  "view": { "qmin": -7.0, "qmax": 7.0, "pmin": -3.0, "pmax": 3.0 },
  "levels": { "count": 30, "grid": 300, "refine": true },
  "orbits": [
    { "q0": 0.5, "p0": 0.0, "duration": 20.0, "method": "verlet", "colour": "#1a2b3c" }
  ]
}"##;

/// GOOD with `from` replaced by `to` (exactly once).
fn bad(from: &str, to: &str) -> String {
    assert_eq!(
        GOOD.matches(from).count(),
        1,
        "pattern {from:?} must occur once"
    );
    GOOD.replace(from, to)
}

fn error_of(text: &str) -> session::SessionError {
    match load(text) {
        Ok(_) => panic!("expected an error for:\n{text}"),
        Err(e) => e,
    }
}

#[test]
fn good_file_loads_with_all_values() {
    let (s, warnings) = load(GOOD).expect("loads");
    assert!(warnings.is_empty(), "{warnings:?}");
    assert_eq!(s.title, "tilted lattice");
    assert_eq!(s.parameters.len(), 2);
    assert_eq!(s.parameters[0].step, Some(0.01));
    assert_eq!(s.view.qmin, -7.0);
    assert_eq!(s.levels.grid, 300);
    assert!(s.levels.refine);
    assert_eq!(s.orbits[0].method, "verlet");
    assert_eq!(s.orbits[0].colour.as_deref(), Some("#1a2b3c"));
}

#[test]
fn system_from_session_uses_parameter_values() {
    let s = Session::from_json(GOOD).expect("loads");
    let sys = s.system().expect("system");
    // H(0.5, 0) = -1·cos(0.5) - 0.1·0.5, direct evaluation of the formula.
    let expected = -(0.5f64).cos() - 0.05;
    assert!((sys.energy(0.5, 0.0) - expected).abs() < 1e-15);
    assert_eq!(sys.param("b"), Some(0.1));
}

#[test]
fn minimal_file_gets_defaults() {
    let text = r#"{"format": "phasewright-session", "version": 1, "formula": "p^2/2 + q^2/2"}"#;
    let (s, w) = load(text).expect("loads");
    assert!(w.is_empty());
    assert_eq!(s.levels, LevelSettings::default());
    assert!(s.orbits.is_empty());
    assert_eq!(s.orbits, Vec::<SeededOrbit>::new());
}

#[test]
fn error_display_names_field_and_problem() {
    let e = error_of(&bad(
        r#""min": -1.0, "max": 1.0"#,
        r#""min": 3.0, "max": 2.0"#,
    ));
    assert_eq!(
        e.to_string(),
        "field `parameters[1].min`: must be less than max (3 ≥ 2)"
    );
}

#[test]
fn invalid_json_reports_line_and_column() {
    let text = GOOD.replace(
        r#""title": "tilted lattice","#,
        r#""title": "tilted lattice""#,
    );
    let e = error_of(&text);
    assert_eq!(e.field, "");
    assert!(e.problem.contains("not valid JSON"), "{e}");
    assert!(e.problem.contains("line 5, column"), "{e}");
}

#[test]
fn empty_and_non_object_files_are_refused() {
    assert!(error_of("").problem.contains("not valid JSON"));
    assert!(error_of("[1, 2]").problem.contains("an array"));
    assert!(error_of("42").problem.contains("a number"));
}

#[test]
fn wrong_format_is_named() {
    let e = error_of(&bad(r#""phasewright-session""#, r#""something-else""#));
    assert_eq!(e.field, "format");
    assert!(e.problem.contains("something-else"), "{e}");
    let e = error_of(&bad(r#""format": "phasewright-session","#, ""));
    assert_eq!(e.field, "format");
}

#[test]
fn newer_version_is_refused_with_both_versions() {
    let e = error_of(&bad(r#""version": 1"#, r#""version": 3"#));
    assert_eq!(e.field, "version");
    assert_eq!(
        e.problem,
        format!(
            "written by a newer phasewright (version 3); this one reads up to {FORMAT_VERSION}"
        )
    );
    let e = error_of(&bad(r#""version": 1"#, r#""version": "one""#));
    assert_eq!(e.field, "version");
    let e = error_of(&bad(r#""version": 1"#, r#""version": 0"#));
    assert_eq!(e.field, "version");
}

#[test]
fn wrong_types_are_named_with_the_field_path() {
    let e = error_of(&bad(r#""max": 2.0"#, r#""max": "two""#));
    assert_eq!(e.field, "parameters[0].max");
    assert!(e.problem.contains("expected a number"), "{e}");
    assert!(e.problem.contains("line"), "{e}");

    let e = error_of(&bad(r#""grid": 300"#, r#""grid": -3"#));
    assert_eq!(e.field, "levels.grid");

    let e = error_of(&bad(r#""refine": true"#, r#""refine": "yes""#));
    assert_eq!(e.field, "levels.refine");

    let e = error_of(&bad(r#""q0": 0.5"#, r#""q0": null"#));
    assert_eq!(e.field, "orbits[0].q0");

    let e = error_of(&bad(r#""qmax": 7.0"#, r#""qmax": [7]"#));
    assert_eq!(e.field, "view.qmax");
}

#[test]
fn missing_fields_are_named() {
    let e = error_of(&bad(r#""formula": "p^2/2 - a*cos(q) - b*q","#, ""));
    assert_eq!(e.field, "formula");
    assert!(e.problem.starts_with("missing"), "{e}");

    let e = error_of(&bad(r#""min": -1.0, "#, ""));
    assert_eq!(e.field, "parameters[1].min");
    assert!(e.problem.starts_with("missing"), "{e}");

    let e = error_of(&bad(
        r#""formula": "p^2/2 - a*cos(q) - b*q""#,
        r#""formula": "  ""#,
    ));
    assert_eq!(e.field, "formula");
}

#[test]
fn formula_that_does_not_compile_gives_its_column() {
    let e = error_of(&bad("p^2/2 - a*cos(q) - b*q", "p^2/2 - a*cos(q) - b*"));
    assert_eq!(e.field, "formula");
    assert!(e.problem.contains("column"), "{e}");
}

#[test]
fn parameter_value_outside_range_is_refused() {
    let e = error_of(&bad(r#""value": 1.0"#, r#""value": 5.0"#));
    assert_eq!(e.field, "parameters[0].value");
    assert!(e.problem.contains("[0, 2]"), "{e}");
}

#[test]
fn parameter_step_of_zero_is_continuous_and_a_negative_one_is_refused() {
    // 0 means a continuous slider, as the explorer's step field says
    let (s, _) = session::load(&bad(r#""step": 0.01"#, r#""step": 0"#)).expect("step 0 loads");
    assert_eq!(s.parameters[0].step, None);
    let e = error_of(&bad(r#""step": 0.01"#, r#""step": -1"#));
    assert_eq!(e.field, "parameters[0].step");
}

#[test]
fn duplicate_and_empty_parameter_names_are_refused() {
    let e = error_of(&bad(r#""name": "b""#, r#""name": "a""#));
    assert_eq!(e.field, "parameters[1].name");
    let e = error_of(&bad(r#""name": "b""#, r#""name": """#));
    assert_eq!(e.field, "parameters[1].name");
}

#[test]
fn numbers_too_large_for_f64_are_refused() {
    // JSON has no NaN or infinity; a literal beyond f64 is the way to write one.
    let e = error_of(&bad(r#""qmin": -7.0"#, r#""qmin": -1e999"#));
    assert!(e.problem.contains("out of range"), "{e}");
}

#[test]
fn non_finite_values_built_in_code_are_refused_by_validate() {
    let mut s = Session::from_json(GOOD).expect("loads");
    s.parameters[1].value = f64::NAN;
    let e = s.clone().validate().expect_err("NaN value");
    assert_eq!(e.field, "parameters[1].value");
    s = Session::from_json(GOOD).expect("loads");
    s.view.pmax = f64::INFINITY;
    assert_eq!(s.validate().expect_err("inf").field, "window.pmax");
    let mut s = Session::from_json(GOOD).expect("loads");
    s.orbits[0].duration = f64::NAN;
    assert_eq!(s.validate().expect_err("NaN").field, "orbits[0].duration");
}

#[test]
fn window_min_not_below_max_is_refused() {
    let e = error_of(&bad(
        r#""qmin": -7.0, "qmax": 7.0"#,
        r#""qmin": 7.0, "qmax": 7.0"#,
    ));
    assert_eq!(
        e.to_string(),
        "field `window.qmin`: must be less than qmax (7 ≥ 7)"
    );
    let e = error_of(&bad(r#""pmin": -3.0"#, r#""pmin": 4.0"#));
    assert_eq!(e.field, "window.pmin");
}

#[test]
fn orbit_problems_are_named() {
    let e = error_of(&bad(r#""method": "verlet""#, r#""method": "fastest""#));
    assert_eq!(e.field, "orbits[0].method");
    assert!(e.problem.contains("fastest"), "{e}");
    let e = error_of(&bad(r##""#1a2b3c""##, r#""red""#));
    assert_eq!(e.field, "orbits[0].colour");
    let e = error_of(&bad(r##""#1a2b3c""##, r##""#12345g""##));
    assert_eq!(e.field, "orbits[0].colour");
    let e = error_of(&bad(r#""duration": 20.0"#, r#""duration": 0"#));
    assert_eq!(e.field, "orbits[0].duration");
}

#[test]
fn unused_parameter_is_a_warning() {
    let text = bad(
        r#"{ "name": "b", "value": 0.1, "min": -1.0, "max": 1.0 }"#,
        r#"{ "name": "b", "value": 0.1, "min": -1.0, "max": 1.0 },
    { "name": "zeta", "value": 0.0, "min": -1.0, "max": 1.0 }"#,
    );
    let (s, w) = load(&text).expect("loads");
    assert_eq!(s.parameters.len(), 3);
    assert_eq!(w.len(), 1, "{w:?}");
    assert!(w[0].contains("zeta"), "{w:?}");
}

#[test]
fn formula_parameter_missing_from_list_is_added_with_warning() {
    let text = bad(
        r#",
    { "name": "b", "value": 0.1, "min": -1.0, "max": 1.0 }"#,
        "",
    );
    let (s, w) = load(&text).expect("loads");
    let b = s.parameter("b").expect("b added");
    assert_eq!(b.value, session::DEFAULT_PARAM_VALUE);
    assert_eq!((b.min, b.max), session::DEFAULT_PARAM_RANGE);
    assert_eq!(w.len(), 1);
    assert!(w[0].contains("`b`"), "{w:?}");
    assert!(s.system().is_ok());
}

#[test]
fn values_above_caps_load_clamped_with_warnings() {
    let text = bad(
        r#""count": 30, "grid": 300"#,
        r#""count": 5000, "grid": 100000"#,
    )
    .replace(r#""duration": 20.0"#, r#""duration": -5e7"#);
    let (s, w) = load(&text).expect("loads");
    assert_eq!(s.levels.grid, MAX_GRID);
    assert_eq!(s.levels.count, MAX_LEVELS);
    assert_eq!(s.orbits[0].duration, -MAX_DURATION);
    assert_eq!(w.len(), 3, "{w:?}");
    assert!(w.iter().any(|m| m.starts_with("levels.grid")));
    assert!(w.iter().any(|m| m.starts_with("levels.count")));
    assert!(w.iter().any(|m| m.starts_with("orbits[0].duration")));
}

#[test]
fn too_many_orbits_keep_the_first_ones() {
    let mut s = Session::from_json(GOOD).expect("loads");
    let orbit = s.orbits[0].clone();
    s.orbits = (0..MAX_ORBITS + 6)
        .map(|i| SeededOrbit {
            q0: i as f64 * 0.01,
            ..orbit.clone()
        })
        .collect();
    let (back, w) = load(&s.to_json_pretty()).expect("loads");
    assert_eq!(back.orbits.len(), MAX_ORBITS);
    assert_eq!(
        back.orbits[MAX_ORBITS - 1].q0,
        (MAX_ORBITS - 1) as f64 * 0.01
    );
    assert!(w[0].contains("keeping the first"), "{w:?}");
}

#[test]
fn round_trip_keeps_every_value() {
    let a = Session::from_json(GOOD).expect("loads");
    let b = Session::from_json(&a.to_json_pretty()).expect("reloads");
    assert_eq!(a, b);
    assert_eq!(a.to_json_pretty(), b.to_json_pretty());
}

#[test]
fn save_atomic_writes_a_file_that_loads_back() {
    let dir = tempfile::tempdir().expect("tempdir");
    let path = dir.path().join("s.json");
    let s = Session::from_json(GOOD).expect("loads");
    save_atomic(&path, &s).expect("saves");
    let back = session::load_file(&path).expect("reloads").0;
    assert_eq!(back, s);
    // Only the target is left in the folder: no temporary files.
    let names: Vec<_> = std::fs::read_dir(dir.path())
        .expect("read dir")
        .filter_map(|e| e.ok())
        .map(|e| e.file_name())
        .collect();
    assert_eq!(names, vec![std::ffi::OsString::from("s.json")]);
}

#[test]
fn failed_write_midway_leaves_old_file_intact() {
    let dir = tempfile::tempdir().expect("tempdir");
    let path = dir.path().join("s.json");
    let old = Session::from_json(GOOD).expect("loads");
    save_atomic(&path, &old).expect("first save");
    let before = std::fs::read(&path).expect("read");

    let result = write_atomic(&path, |w| {
        w.write_all(b"{\"format\": \"phasewright-ses")?;
        Err(std::io::Error::other("disk full (simulated)"))
    });
    let err = result.expect_err("the writer failed");
    assert_eq!(err.path, path);
    assert!(err.to_string().contains("disk full"), "{err}");
    assert_eq!(std::fs::read(&path).expect("read"), before);
    assert_eq!(std::fs::read_dir(dir.path()).expect("dir").count(), 1);
}

#[test]
fn save_into_missing_folder_reports_the_path() {
    let dir = tempfile::tempdir().expect("tempdir");
    let path = dir.path().join("no-such-folder").join("s.json");
    let s = Session::from_json(GOOD).expect("loads");
    let err = save_atomic(&path, &s).expect_err("folder missing");
    assert_eq!(err.path, path);
    assert!(err.to_string().contains("no-such-folder"), "{err}");
}

#[test]
fn save_over_a_folder_fails_and_keeps_it() {
    let dir = tempfile::tempdir().expect("tempdir");
    let target = dir.path().join("taken");
    std::fs::create_dir(&target).expect("mkdir");
    std::fs::write(target.join("inside.txt"), b"keep").expect("write");
    let s = Session::from_json(GOOD).expect("loads");
    assert!(save_atomic(&target, &s).is_err());
    assert_eq!(
        std::fs::read(target.join("inside.txt")).expect("read"),
        b"keep"
    );
    assert_eq!(std::fs::read_dir(dir.path()).expect("dir").count(), 1);
}

#[test]
fn loading_a_missing_file_says_so() {
    let e = session::load_file(std::path::Path::new("/no/such/file.json")).expect_err("missing");
    assert!(e.problem.contains("cannot read"), "{e}");
}

// ---- property tests ----

fn finite() -> impl Strategy<Value = f64> {
    prop_oneof![
        -1e6..1e6f64,
        any::<f64>().prop_filter("finite", |v| v.is_finite()),
        Just(0.1),
        Just(-0.0),
        Just(1.0 / 3.0),
    ]
}

fn parameter(name: String) -> impl Strategy<Value = Parameter> {
    (
        finite(),
        finite(),
        0.0..1.0f64,
        proptest::option::of(1e-9..1e3f64),
    )
        .prop_filter_map("min < max", move |(a, b, t, step)| {
            let (min, max) = if a < b { (a, b) } else { (b, a) };
            let value = min + t * (max - min);
            (min < max && value.is_finite() && value >= min && value <= max).then(|| Parameter {
                name: name.clone(),
                value,
                min,
                max,
                step,
            })
        })
}

fn orbit() -> impl Strategy<Value = SeededOrbit> {
    (
        finite(),
        finite(),
        prop_oneof![1e-6..MAX_DURATION, -MAX_DURATION..-1e-6],
        prop::sample::select(session::ORBIT_METHODS.to_vec()),
        proptest::option::of("#[0-9a-fA-F]{6}"),
    )
        .prop_map(|(q0, p0, duration, method, colour)| SeededOrbit {
            q0,
            p0,
            duration,
            method: method.to_string(),
            colour,
        })
}

fn session_strategy() -> impl Strategy<Value = Session> {
    (
        ".{0,40}",
        ".{0,80}",
        parameter("a".into()),
        parameter("b".into()),
        (-1e3..1e3f64, 1e-3..1e3f64, -1e3..1e3f64, 1e-3..1e3f64),
        (0..=MAX_LEVELS, 16..=MAX_GRID, any::<bool>()),
        prop::collection::vec(orbit(), 0..4),
    )
        .prop_map(
            |(title, notes, a, b, (q0, w, p0, h), (count, grid, refine), orbits)| Session {
                format: FORMAT_NAME.into(),
                version: FORMAT_VERSION,
                title,
                notes,
                formula: "p^2/2 + a*q^2/2 + b*q^4/4".into(),
                parameters: vec![a, b],
                view: phasewright::core::window::Window {
                    qmin: q0,
                    qmax: q0 + w,
                    pmin: p0,
                    pmax: p0 + h,
                },
                levels: LevelSettings {
                    count,
                    grid,
                    refine,
                },
                orbits,
                sweep: None,
                folds: None,
                backbone: None,
                drive: None,
                quantum: None,
                basin: None,
            },
        )
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(200))]

    #[test]
    fn generated_sessions_round_trip_exactly(s in session_strategy()) {
        let (first, w) = load(&s.to_json_pretty()).expect("a generated session loads");
        prop_assert!(w.is_empty(), "{:?}", w);
        prop_assert_eq!(&first, &s);
        let second = Session::from_json(&first.to_json_pretty()).expect("reloads");
        prop_assert_eq!(&second, &first);
        // Bit-exact numbers, not just equal ones.
        for (x, y) in first.parameters.iter().zip(&second.parameters) {
            prop_assert_eq!(x.value.to_bits(), y.value.to_bits());
        }
    }

    #[test]
    fn random_text_never_panics(text in ".{0,200}") {
        let _ = load(&text);
    }

    #[test]
    fn mutated_session_never_panics_and_errors_name_something(
        at in 0usize..2000, len in 0usize..8, insert in ".{0,6}"
    ) {
        let mut chars: Vec<char> = GOOD.chars().collect();
        let at = at.min(chars.len());
        let end = (at + len).min(chars.len());
        chars.splice(at..end, insert.chars());
        let text: String = chars.into_iter().collect();
        if let Err(e) = load(&text) {
            prop_assert!(!e.problem.is_empty());
        }
    }
}

#[test]
fn parameter_named_like_a_constant_gets_a_specific_warning() {
    // `e` is Euler's number in formulas, so a parameter of that name is never read.
    let text = bad(r#""name": "b""#, r#""name": "e""#).replace("- b*q", "- e*q");
    let (s, w) = load(&text).expect("loads");
    assert_eq!(s.parameters[1].name, "e");
    assert!(
        w.iter()
            .any(|m| m.contains("built-in name") && m.contains("`e`")),
        "{w:?}"
    );
}

/// Every leaf of a JSON value with its path written the way errors name fields.
fn leaves(v: &serde_json::Value, path: String, out: &mut Vec<String>) {
    match v {
        serde_json::Value::Object(m) => {
            for (k, x) in m {
                let p = if path.is_empty() {
                    k.clone()
                } else {
                    format!("{path}.{k}")
                };
                leaves(x, p, out);
            }
        }
        serde_json::Value::Array(a) => {
            for (i, x) in a.iter().enumerate() {
                leaves(x, format!("{path}[{i}]"), out);
            }
        }
        _ => out.push(path),
    }
}

fn leaf_mut<'a>(v: &'a mut serde_json::Value, path: &str) -> &'a mut serde_json::Value {
    let mut cur = v;
    for part in path.split('.') {
        let (key, index) = match part.split_once('[') {
            Some((k, i)) => (k, i.trim_end_matches(']').parse::<usize>().ok()),
            None => (part, None),
        };
        cur = &mut cur[key];
        if let Some(i) = index {
            cur = &mut cur[i];
        }
    }
    cur
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]

    /// Any field given a value of the wrong JSON type is refused, and the
    /// error names exactly that field.
    #[test]
    fn wrong_type_anywhere_is_named_by_its_path(pick in any::<prop::sample::Index>(), kind in 0usize..3) {
        let good: serde_json::Value = serde_json::from_str(GOOD).expect("GOOD is JSON");
        let mut paths = Vec::new();
        leaves(&good, String::new(), &mut paths);
        let path = pick.get(&paths).clone();
        let mut v = good.clone();
        let leaf = leaf_mut(&mut v, &path);
        let replacement = match (kind, leaf.is_string()) {
            (0, true) => serde_json::json!(7),
            (0, false) => serde_json::json!("seven"),
            (1, _) => serde_json::json!([]),
            _ => serde_json::json!({"x": 1}),
        };
        *leaf = replacement;
        let e = load(&v.to_string()).expect_err("a wrong type is refused");
        prop_assert_eq!(&e.field, &path, "{}", e);
    }
}

#[test]
fn unknown_fields_are_named_in_warnings() {
    let text = bad(
        r#""title": "tilted lattice","#,
        r#""title": "tilted lattice", "paramters": [],"#,
    )
    .replace(r#""duration": 20.0"#, r#""duration": 20.0, "speed": 2"#);
    let (s, w) = load(&text).expect("loads");
    assert_eq!(s.parameters.len(), 2);
    assert_eq!(w.len(), 2, "{w:?}");
    assert!(
        w.iter().any(|m| m.starts_with("paramters: unknown field")),
        "{w:?}"
    );
    assert!(
        w.iter()
            .any(|m| m.starts_with("orbits[0].speed: unknown field")),
        "{w:?}"
    );
}

#[test]
fn explicit_method_on_a_non_separable_formula_is_a_warning() {
    let text = bad("p^2/2 - a*cos(q) - b*q", "p^2/2 - a*cos(q) - b*q*p");
    let (_, w) = load(&text).expect("loads");
    assert_eq!(w.len(), 1, "{w:?}");
    assert!(w[0].starts_with("orbits[0].method"), "{w:?}");
}

/// GOOD with the sweep, fold-curve and backbone settings added.
fn with_analyses() -> String {
    bad(
        r#""orbits": ["#,
        r#""sweep": { "param": "b", "from": -1.5, "to": 1.5, "max_step": 0.01 },
  "folds": { "params": ["b", "a"], "box": [-1.5, 1.5, 0.2, 2.0] },
  "backbone": { "center": [0.1, 0.0], "energies": 120 },
  "orbits": ["#,
    )
}

#[test]
fn analysis_settings_load_and_round_trip_exactly() {
    let text = with_analyses();
    let (s, w) = load(&text).expect("loads");
    assert!(w.is_empty(), "{w:?}");
    let sw = s.sweep.as_ref().expect("sweep settings");
    assert_eq!(
        (sw.param.as_str(), sw.from, sw.to, sw.max_step),
        ("b", -1.5, 1.5, Some(0.01))
    );
    let f = s.folds.as_ref().expect("fold settings");
    assert_eq!(f.params, ["b".to_string(), "a".to_string()]);
    assert_eq!(f.bounds, [-1.5, 1.5, 0.2, 2.0]);
    let b = s.backbone.as_ref().expect("backbone settings");
    assert_eq!((b.center, b.energies), (Some([0.1, 0.0]), Some(120)));
    assert_eq!(s.sweep_config().step.max, 0.01);
    assert_eq!(s.backbone_config().energies, 120);
    let back = Session::from_json(&s.to_json_pretty()).expect("reloads");
    assert_eq!(s, back);
    assert_eq!(s.to_json_pretty(), back.to_json_pretty());
}

#[test]
fn a_file_without_analysis_settings_loads_and_saves_without_them() {
    let s = Session::from_json(GOOD).expect("loads");
    assert_eq!((&s.sweep, &s.folds, &s.backbone), (&None, &None, &None));
    let text = s.to_json_pretty();
    for key in ["\"sweep\"", "\"folds\"", "\"backbone\""] {
        assert!(!text.contains(key), "{key} written: {text}");
    }
    // Defaults of the core apply when the session says nothing.
    assert_eq!(s.sweep_config().step.max, 0.02);
    assert_eq!(s.backbone_config().energies, 200);
}

#[test]
fn bad_analysis_settings_are_named_by_field() {
    let good = with_analyses();
    let cases: [(&str, &str, &str, &str); 9] = [
        (
            r#""from": -1.5"#,
            r#""from": "low""#,
            "sweep.from",
            "expected a number",
        ),
        (r#""to": 1.5"#, r#""to": -1.5"#, "sweep.to", "must differ"),
        (r#""param": "b", "#, "", "sweep.param", "missing"),
        (
            r#""max_step": 0.01"#,
            r#""max_step": -0.01"#,
            "sweep.max_step",
            "greater than 0",
        ),
        (
            r#""params": ["b", "a"]"#,
            r#""params": ["a", "a"]"#,
            "folds.params[1]",
            "must differ",
        ),
        (
            r#"[-1.5, 1.5, 0.2, 2.0]"#,
            r#"[1.5, -1.5, 0.2, 2.0]"#,
            "folds.box[0]",
            "less than",
        ),
        (
            r#"[-1.5, 1.5, 0.2, 2.0]"#,
            r#"[-1.5, 1.5, 0.2]"#,
            "folds.box",
            "length",
        ),
        (
            r#""center": [0.1, 0.0]"#,
            r#""center": [0.1]"#,
            "backbone.center",
            "length",
        ),
        (
            r#""energies": 120"#,
            r#""energies": -3"#,
            "backbone.energies",
            "",
        ),
    ];
    for (from, to, field, words) in cases {
        assert_eq!(good.matches(from).count(), 1, "{from}");
        let e = error_of(&good.replace(from, to));
        assert_eq!(e.field, field, "{from} -> {to}: {e}");
        assert!(e.problem.contains(words), "{from} -> {to}: {e}");
    }
}

#[test]
fn analysis_work_amounts_load_clamped_with_warnings() {
    let text = with_analyses()
        .replace(r#""max_step": 0.01"#, r#""max_step": 5"#)
        .replace(r#""energies": 120"#, r#""energies": 1000000"#);
    let (s, w) = load(&text).expect("loads");
    assert_eq!(
        s.sweep.as_ref().and_then(|x| x.max_step),
        Some(session::MAX_SWEEP_STEP)
    );
    assert_eq!(
        s.backbone.as_ref().and_then(|x| x.energies),
        Some(session::MAX_BACKBONE_ENERGIES)
    );
    assert_eq!(w.len(), 2, "{w:?}");
    assert!(w.iter().any(|m| m.starts_with("sweep.max_step")), "{w:?}");
    assert!(
        w.iter().any(|m| m.starts_with("backbone.energies")),
        "{w:?}"
    );
    let few = with_analyses().replace(r#""energies": 120"#, r#""energies": 1"#);
    let (s, w) = load(&few).expect("loads");
    assert_eq!(
        s.backbone.as_ref().and_then(|x| x.energies),
        Some(session::MIN_BACKBONE_ENERGIES)
    );
    assert_eq!(w.len(), 1, "{w:?}");
}

#[test]
fn analysis_settings_naming_no_formula_parameter_warn_and_keep_the_name() {
    let text = with_analyses()
        .replace(r#""param": "b""#, r#""param": "beta""#)
        .replace(r#""params": ["b", "a"]"#, r#""params": ["b", "gamma"]"#);
    let (s, w) = load(&text).expect("loads");
    assert_eq!(s.sweep.as_ref().map(|x| x.param.as_str()), Some("beta"));
    assert_eq!(w.len(), 2, "{w:?}");
    assert!(
        w[0].starts_with("sweep.param") && w[0].contains("a, b"),
        "{w:?}"
    );
    assert!(w[1].starts_with("folds.params[1]"), "{w:?}");
}

#[test]
fn unknown_fields_inside_analysis_settings_are_named() {
    let text = with_analyses().replace(r#""energies": 120"#, r#""energies": 120, "centre": 1"#);
    let (_, w) = load(&text).expect("loads");
    assert_eq!(
        w,
        vec!["backbone.centre: unknown field, ignored (check the spelling)"]
    );
}

/// GOOD with a `quantum` section whose ħ is `hbar`.
fn with_hbar(hbar: &str) -> String {
    bad(
        r#""levels": { "count": 30"#,
        &format!(r#""quantum": {{ "hbar": {hbar} }}, "levels": {{ "count": 30"#),
    )
}

#[test]
fn hbar_is_an_expression_over_the_parameters() {
    // a = 1.0 and b = 0.1 in GOOD: 0.5*a + b = 0.6 (arithmetic).
    let (s, w) = load(&with_hbar(r#""0.5*a + b""#)).expect("loads");
    assert!(w.is_empty(), "{w:?}");
    assert_eq!(s.hbar().expect("ħ"), Some(0.5 * 1.0 + 0.1));
    let back = Session::from_json(&s.to_json_pretty()).expect("round trip");
    assert_eq!(back, s);
    // Without the section there is no ħ, and none is written.
    let plain = Session::from_json(GOOD).expect("loads");
    assert_eq!(plain.hbar().expect("no error"), None);
    assert!(!plain.to_json_pretty().contains("quantum"));
}

#[test]
fn a_parameter_used_only_by_hbar_is_not_unused() {
    let text = with_hbar(r#""h""#).replace(
        r#"{ "name": "b", "value": 0.1, "min": -1.0, "max": 1.0 }"#,
        r#"{ "name": "b", "value": 0.1, "min": -1.0, "max": 1.0 },
    { "name": "h", "value": 0.05, "min": 0.01, "max": 0.2 }"#,
    );
    let (s, w) = load(&text).expect("loads");
    assert!(w.is_empty(), "{w:?}");
    assert_eq!(s.hbar().expect("ħ"), Some(0.05));
}

#[test]
fn bad_hbar_is_refused_with_its_field() {
    for (hbar, problem) in [
        (r#""0""#, "must be a positive number"),
        (r#""-0.1""#, "must be a positive number"),
        (r#""b - 1""#, "comes out as -0.9"),
        (r#""ln(0)""#, "must be a positive number"),
        (r#""0.1*q""#, "not q, p or t"),
        (r#""0.1*t""#, "not q, p or t"),
        (r#""0.1*k""#, "`k`, which is not a parameter"),
        (r#""0.1 +""#, ""),
        (r#""""#, "is empty"),
    ] {
        let e = error_of(&with_hbar(hbar));
        assert_eq!(e.field, "quantum.hbar", "{hbar}: {e}");
        assert!(e.problem.contains(problem), "{hbar}: {e}");
    }
    // A number where an expression in quotes is expected: named by its path.
    let e = error_of(&with_hbar("0.1"));
    assert_eq!(e.field, "quantum.hbar", "{e}");
}
