//! The session loader under hostile input: random bytes, and the example
//! sessions mutated — fields deleted, values of the wrong type, keys
//! duplicated, huge and tiny numbers, deep nesting, long strings. Every call
//! returns a session or an error that names the field (or the line and column
//! of broken JSON), never panics, and finishes inside the watchdog's deadline.
//! A session that loads has every work amount within its cap.
//!
//! Case count: `PHASEWRIGHT_FUZZ_CASES` (see `tests/hostile_formula.rs`).

#[path = "common/hostile.rs"]
mod hostile;

use hostile::{bounded, cases};
use phasewright::session::{
    self, MAX_BACKBONE_ENERGIES, MAX_DURATION, MAX_FILE_BYTES, MAX_GRID, MAX_LEVELS, MAX_ORBITS,
    MAX_SWEEP_STEP, MIN_BACKBONE_ENERGIES, MIN_GRID, MIN_SWEEP_STEP, Session,
};
use proptest::prelude::*;
use proptest::test_runner::{Config, FileFailurePersistence};
use serde_json::Value;

const EXAMPLES: [&str; 9] = [
    include_str!("../sessions/barrier-crossing.json"),
    include_str!("../sessions/biased-resonator.json"),
    include_str!("../sessions/bond-ladder.json"),
    include_str!("../sessions/diatomic-bond.json"),
    include_str!("../sessions/driven-resonator.json"),
    include_str!("../sessions/imperfect-strut.json"),
    include_str!("../sessions/loaded-strut.json"),
    include_str!("../sessions/shaken-lattice.json"),
    include_str!("../sessions/tilted-lattice.json"),
];

fn config() -> Config {
    Config {
        cases: cases(),
        failure_persistence: Some(Box::new(FileFailurePersistence::Off)),
        ..Config::default()
    }
}

/// Load `text`; check the outcome. A refusal names a field, or a position
/// (line and column) in the text, or is about the file as a whole. A
/// session that loads is within every cap, checks again without change and
/// survives save → load exactly.
fn check(text: &str) -> Result<(), TestCaseError> {
    bounded(
        || format!("{text:?}"),
        || match session::load(text) {
            Err(e) => {
                prop_assert!(!e.problem.trim().is_empty(), "empty problem for {:?}", text);
                let whole_file = e.problem.starts_with("a session is a JSON object")
                    || e.problem.starts_with("the file is");
                prop_assert!(
                    !e.field.is_empty() || e.problem.contains("(line ") || whole_file,
                    "the refusal says neither field nor position: {} for {:?}",
                    e,
                    text
                );
                Ok(())
            }
            Ok((s, warnings)) => {
                for w in &warnings {
                    prop_assert!(!w.trim().is_empty());
                }
                within_caps(&s)?;
                let mut again = s.clone();
                let more = again.validate();
                prop_assert!(more.is_ok(), "{:?}", more);
                prop_assert_eq!(&again, &s);
                match Session::from_json(&s.to_json_pretty()) {
                    Ok(back) => prop_assert_eq!(&back, &s),
                    Err(e) => prop_assert!(false, "saved session does not reload: {}", e),
                }
                Ok(())
            }
        },
    )
}

fn within_caps(s: &Session) -> Result<(), TestCaseError> {
    prop_assert!((MIN_GRID..=MAX_GRID).contains(&s.levels.grid));
    prop_assert!(s.levels.count <= MAX_LEVELS);
    prop_assert!(s.orbits.len() <= MAX_ORBITS);
    for o in &s.orbits {
        prop_assert!(o.duration.abs() <= MAX_DURATION && o.duration != 0.0);
    }
    prop_assert!(s.formula.len() <= phasewright::core::formula::MAX_SOURCE_BYTES);
    if let Some(step) = s.sweep.as_ref().and_then(|w| w.max_step) {
        prop_assert!((MIN_SWEEP_STEP..=MAX_SWEEP_STEP).contains(&step));
    }
    if let Some(n) = s.backbone.as_ref().and_then(|b| b.energies) {
        prop_assert!((MIN_BACKBONE_ENERGIES..=MAX_BACKBONE_ENERGIES).contains(&n));
    }
    if let Some(d) = &s.drive {
        use phasewright::session::drive::{MAX_SECTION_LATTICE, MAX_SECTION_PERIODS};
        prop_assert!(
            d.periods
                .is_none_or(|n| (1..=MAX_SECTION_PERIODS).contains(&n))
        );
        prop_assert!(
            d.lattice
                .is_none_or(|n| (1..=MAX_SECTION_LATTICE).contains(&n))
        );
        // a drive that loads has a period > 0 and a damping ≥ 0, or is off
        if let Ok(Some(v)) = s.drive() {
            prop_assert!(v.period > 0.0 && v.damping >= 0.0);
        }
    }
    Ok(())
}

/// Every path (object keys and array indices) in a JSON value.
fn paths(v: &Value, here: Vec<PathPart>, out: &mut Vec<Vec<PathPart>>) {
    out.push(here.clone());
    match v {
        Value::Object(m) => {
            for (k, x) in m {
                let mut p = here.clone();
                p.push(PathPart::Key(k.clone()));
                paths(x, p, out);
            }
        }
        Value::Array(a) => {
            for (i, x) in a.iter().enumerate() {
                let mut p = here.clone();
                p.push(PathPart::Index(i));
                paths(x, p, out);
            }
        }
        _ => {}
    }
}

#[derive(Clone, Debug)]
enum PathPart {
    Key(String),
    Index(usize),
}

fn at<'a>(v: &'a mut Value, path: &[PathPart]) -> Option<&'a mut Value> {
    let mut cur = v;
    for part in path {
        cur = match part {
            PathPart::Key(k) => cur.get_mut(k.as_str())?,
            PathPart::Index(i) => cur.get_mut(*i)?,
        };
    }
    Some(cur)
}

/// Values that stress a loader: other types, extreme numbers, long and odd strings, deep nesting.
fn hostile_value() -> impl Strategy<Value = String> {
    prop_oneof![
        Just("null".to_string()),
        Just("true".to_string()),
        Just("\"\"".to_string()),
        Just("[]".to_string()),
        Just("{}".to_string()),
        Just("1e400".to_string()),
        Just("-1e400".to_string()),
        Just("1e-400".to_string()),
        Just("1.7976931348623157e308".to_string()),
        Just("-0".to_string()),
        Just("18446744073709551616".to_string()),
        Just("18446744073709551615".to_string()),
        Just("4294967296".to_string()),
        Just("-1".to_string()),
        Just("0".to_string()),
        Just("1e6".to_string()),
        Just("1e9".to_string()),
        Just("123456789012345678901234567890".to_string()),
        Just("\"NaN\"".to_string()),
        Just("\"Infinity\"".to_string()),
        Just("NaN".to_string()),
        Just("\"#zzzzzz\"".to_string()),
        Just("\"p^2/2 + 1/q\"".to_string()),
        Just("\"../../etc/passwd\"".to_string()),
        (1usize..200_000).prop_map(|n| format!("\"{}\"", "x".repeat(n))),
        (1usize..20_000).prop_map(|n| format!("\"{}\"", "q+".repeat(n) + "q")),
        (1usize..3_000).prop_map(|n| format!("{}1{}", "[".repeat(n), "]".repeat(n))),
        (1usize..3_000).prop_map(|n| format!("{}1{}", "{\"a\":".repeat(n), "}".repeat(n))),
        any::<f64>().prop_map(|x| serde_json::to_string(&x).unwrap_or_else(|_| "0".into())),
        any::<i64>().prop_map(|x| x.to_string()),
        "\\PC{0,30}".prop_map(|s| serde_json::to_string(&s).unwrap_or_else(|_| "\"\"".into())),
    ]
}

#[derive(Clone, Debug)]
enum Mutation {
    Delete,
    Replace(String),
    /// Write the key a second time with this value (text level: JSON values cannot hold it).
    Duplicate(String),
    /// Cut the text at this fraction of its length.
    Truncate(f64),
    /// Copy the whole array or object element many times.
    Grow(usize),
}

fn mutation() -> impl Strategy<Value = Mutation> {
    prop_oneof![
        Just(Mutation::Delete),
        hostile_value().prop_map(Mutation::Replace),
        hostile_value().prop_map(Mutation::Duplicate),
        (0.0..1.0f64).prop_map(Mutation::Truncate),
        (2usize..300).prop_map(Mutation::Grow),
    ]
}

/// Apply one mutation at the `pick`-th path of an example session, as text.
fn mutate(example: &str, pick: prop::sample::Index, m: &Mutation) -> String {
    let Ok(mut v) = serde_json::from_str::<Value>(example) else {
        return example.to_string();
    };
    let mut all = Vec::new();
    paths(&v, Vec::new(), &mut all);
    let path = pick.get(&all).clone();
    const MARK: &str = "\"__phasewright_mutation__\"";
    match m {
        Mutation::Truncate(f) => {
            let mut cut = (example.len() as f64 * f) as usize;
            while !example.is_char_boundary(cut) {
                cut -= 1;
            }
            return example[..cut].to_string();
        }
        Mutation::Delete => {
            if let Some((last, parent)) = path.split_last()
                && let Some(target) = at(&mut v, parent)
            {
                match (last, target) {
                    (PathPart::Key(k), Value::Object(o)) => {
                        o.remove(k);
                    }
                    (PathPart::Index(i), Value::Array(a)) if *i < a.len() => {
                        a.remove(*i);
                    }
                    _ => {}
                }
            }
            return v.to_string();
        }
        Mutation::Grow(n) => {
            if let Some(target) = at(&mut v, &path) {
                match target {
                    Value::Array(a) if !a.is_empty() => {
                        let first = a[0].clone();
                        a.extend(std::iter::repeat_n(first, *n));
                    }
                    Value::Object(o) => {
                        for k in 0..*n {
                            o.insert(format!("extra{k}"), Value::from(k));
                        }
                    }
                    _ => {}
                }
            }
            return v.to_string();
        }
        Mutation::Replace(text) => {
            if let Some(target) = at(&mut v, &path) {
                *target = Value::String(MARK.trim_matches('"').to_string());
            }
            v.to_string().replacen(MARK, text, 1)
        }
        Mutation::Duplicate(text) => {
            // the key of this path written once more, first in its object
            let Some((PathPart::Key(k), parent)) = path.split_last() else {
                return v.to_string();
            };
            if let Some(Value::Object(o)) = at(&mut v, parent) {
                o.insert("__phasewright_duplicate__".into(), Value::Null);
            }
            let key = serde_json::to_string(k).unwrap_or_default();
            v.to_string().replacen(
                "\"__phasewright_duplicate__\":null",
                &format!("{key}:{text}"),
                1,
            )
        }
    }
}

proptest! {
    #![proptest_config(config())]

    #[test]
    fn random_bytes_are_refused_with_a_reason(bytes in prop::collection::vec(any::<u8>(), 0..300)) {
        check(&String::from_utf8_lossy(&bytes))?;
    }

    #[test]
    fn json_shaped_noise_is_refused_with_a_reason(text in "[{}\\[\\]\":,0-9a-z .eE+-]{0,200}") {
        check(&text)?;
    }

    #[test]
    fn mutated_examples_load_or_name_the_field(
        which in 0usize..EXAMPLES.len(),
        pick in any::<prop::sample::Index>(),
        m in mutation(),
    ) {
        let text = mutate(EXAMPLES[which], pick, &m);
        check(&text)?;
    }

    #[test]
    fn twice_mutated_examples_load_or_name_the_field(
        which in 0usize..EXAMPLES.len(),
        picks in (any::<prop::sample::Index>(), any::<prop::sample::Index>()),
        ms in (mutation(), mutation()),
    ) {
        let once = mutate(EXAMPLES[which], picks.0, &ms.0);
        let text = mutate(&once, picks.1, &ms.1);
        check(&text)?;
    }
}

#[test]
fn every_example_loads_without_warnings() {
    for text in EXAMPLES {
        let (s, w) = session::load(text).expect("an example loads");
        assert!(w.is_empty(), "{}: {w:?}", s.title);
    }
}

#[test]
fn a_file_over_the_size_cap_is_refused_before_parsing() {
    let text = format!(
        "{{\"format\": \"phasewright-session\", \"version\": 1, \"formula\": \"q\", \"notes\": \"{}\"}}",
        "x".repeat(MAX_FILE_BYTES)
    );
    let e = bounded(|| "huge notes".into(), || session::load(&text)).expect_err("too big");
    assert_eq!(e.field, "");
    assert_eq!(
        e.problem,
        format!(
            "the file is {} bytes; a session is at most {MAX_FILE_BYTES} bytes",
            text.len()
        )
    );
}
