//! The scenario file format across versions: older files keep loading
//! (one migration step per version), newer ones are refused with a message,
//! unknown fields are reported, and format-2 additions are checked.
//! The expectations are the format's own definition (core/src/scenario.rs).

use tussock_core::scenario::{Scenario, ScenarioError, Variant, FORMAT_VERSION, MAX_VARIANTS};

fn fixture(version: u32, name: &str) -> String {
    std::fs::read_to_string(format!(
        "{}/tests/fixtures/format-{version}/{name}",
        env!("CARGO_MANIFEST_DIR")
    ))
    .unwrap()
}

fn example(name: &str) -> Scenario {
    let text =
        std::fs::read_to_string(format!("{}/../examples/{name}", env!("CARGO_MANIFEST_DIR")))
            .unwrap();
    Scenario::from_json(&text).unwrap()
}

fn error(text: &str) -> String {
    match Scenario::from_json(text).and_then(|s| s.validate().map(|_| s)) {
        Ok(_) => panic!("accepted: {text}"),
        Err(e) => e.to_string(),
    }
}

#[test]
fn every_stored_format_1_file_loads_as_its_current_example() {
    let dir = format!("{}/tests/fixtures/format-1", env!("CARGO_MANIFEST_DIR"));
    let mut seen = 0;
    for entry in std::fs::read_dir(dir).unwrap() {
        let name = entry.unwrap().file_name().into_string().unwrap();
        let old = Scenario::from_json(&fixture(1, &name)).unwrap();
        assert_eq!(old.format, Some(FORMAT_VERSION), "{name} not migrated");
        old.validate().unwrap();
        assert_eq!(
            old,
            example(&name),
            "{name} differs from its current example"
        );
        seen += 1;
    }
    assert!(seen >= 4);
}

#[test]
fn newer_and_nonsense_versions_are_refused_with_a_message() {
    let newer = r#"{"format": 99, "model": "logistic", "params": {}, "initial": [1], "t_end": 1}"#;
    assert_eq!(
        Scenario::from_json(newer),
        Err(ScenarioError::NewerFormat {
            found: 99,
            supported: FORMAT_VERSION
        })
    );
    for bad in ["0", "-1", "1.5", "\"two\""] {
        let text =
            format!(r#"{{"format": {bad}, "model": "logistic", "initial": [1], "t_end": 1}}"#);
        assert!(error(&text).starts_with("format:"), "{bad}");
    }
}

#[test]
fn unknown_fields_are_reported_not_dropped() {
    let text = r#"{"model": "logistic", "params": {"b": 1, "d": 0.1, "K": 10}, "initial": [1], "t_end": 1, "colour": "red"}"#;
    assert!(
        error(text).contains("unknown field `colour`"),
        "{}",
        error(text)
    );
}

#[test]
fn variants_are_checked_and_round_trip() {
    let base = example("greenhouse-release.json");
    let mut with = base.clone();
    let mut other = base.clone();
    other.events.truncate(1);
    with.variants.push(Variant {
        name: "one release".into(),
        scenario: Box::new(other.clone()),
    });
    with.validate().unwrap();
    let again = Scenario::from_json(&with.to_json_pretty()).unwrap();
    assert_eq!(again, with);

    let mut nested = with.clone();
    nested.variants[0].scenario.variants.push(Variant {
        name: "inner".into(),
        scenario: Box::new(base.clone()),
    });
    assert!(nested
        .validate()
        .unwrap_err()
        .to_string()
        .starts_with("variants[0].scenario:"));

    let mut bad = with.clone();
    bad.variants[0].scenario.t_end = -3.0;
    assert_eq!(
        bad.validate().unwrap_err().to_string(),
        "variants[0].scenario.t_end: must be a positive number, got -3"
    );

    let mut unnamed = with.clone();
    unnamed.variants[0].name = "  ".into();
    assert!(unnamed
        .validate()
        .unwrap_err()
        .to_string()
        .starts_with("variants[0].name:"));

    let mut many = with.clone();
    for i in 0..MAX_VARIANTS {
        many.variants.push(Variant {
            name: format!("v{i}"),
            scenario: Box::new(other.clone()),
        });
    }
    assert!(many
        .validate()
        .unwrap_err()
        .to_string()
        .starts_with("variants:"));
}

#[test]
fn imported_counts_are_checked_like_the_csv_reader_checks_them() {
    let mut s = example("microcosm-competition.json");
    s.data = Some(tussock_core::data::CountData {
        times: vec![0.0, 2.0, 1.0],
        series: vec![tussock_core::data::CountSeries {
            species: 0,
            column: "alga".into(),
            counts: vec![Some(1.0), Some(2.0), Some(3.0)],
        }],
    });
    let message = s.validate().unwrap_err().to_string();
    assert!(message.starts_with("data."), "{message}");
}
