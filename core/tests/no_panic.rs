//! No input makes the scenario parser or the count reader panic: arbitrary
//! text, and the example scenarios and small count files damaged at random,
//! come back as Ok or Err. The cargo-fuzz targets in `fuzz/` search the
//! same property for much longer (see DEVELOPERS.md, Fuzzing); a crash
//! either finds becomes a test here named after it.

use proptest::prelude::*;
use tussock_core::data::{read_counts, ImportOptions};
use tussock_core::Scenario;

const SCENARIOS: &[&str] = &[
    include_str!("../../examples/greenhouse-mites.json"),
    include_str!("../../examples/greenhouse-plan.json"),
    include_str!("../../examples/greenhouse-release.json"),
    include_str!("../../examples/microcosm-competition.json"),
    include_str!("../../examples/reserve-reintroduction.json"),
];

const CSVS: &[&str] = &[
    "day,prey\n0,12\n7,30\n14,55\n21,NA\n28,80\n",
    "time,prey,predator\n0,40,9\n5,31.5,12\n10,,15\n15,22,N/A\n",
    "week;prey;predator\n0;3,5;1\n1;4,25;-\n2;6;2,5\n",
    "\u{feff}t\tprey\n0\t1e3\n1\t2.5e2\n2\tNaN\n",
    "0,1\n1,2\n2,4\n3,8\n",
    "day,\"prey, adults\"\n0,\"12\"\n1,\"x\"\n2\n",
];

/// Values put in place of a number: not numbers, out of range, negative,
/// deeply nested.
fn odd_value() -> impl Strategy<Value = String> {
    prop_oneof![
        Just("NaN".to_string()),
        Just("\"NaN\"".to_string()),
        Just("Infinity".to_string()),
        Just("-inf".to_string()),
        Just("1e400".to_string()),
        Just("-1e400".to_string()),
        Just("1e-400".to_string()),
        Just("1.7976931348623157e308".to_string()),
        Just("18446744073709551616".to_string()),
        Just("-0".to_string()),
        Just("null".to_string()),
        Just("\"\"".to_string()),
        any::<f64>().prop_map(|x| format!("{x:e}")),
        any::<i64>().prop_map(|n| n.to_string()),
        (1usize..300).prop_map(|depth| format!("{}1{}", "[".repeat(depth), "]".repeat(depth))),
        (1usize..300).prop_map(|depth| format!("{}{}", "{\"a\":".repeat(depth), "}".repeat(depth))),
    ]
}

/// One random edit of a byte string: flip, insert or delete at a position
/// (taken modulo the length).
#[derive(Clone, Debug)]
enum Edit {
    Flip(usize, u8),
    Insert(usize, u8),
    Delete(usize),
}

fn edits() -> impl Strategy<Value = Vec<Edit>> {
    let edit = prop_oneof![
        (any::<usize>(), any::<u8>()).prop_map(|(i, b)| Edit::Flip(i, b)),
        (any::<usize>(), any::<u8>()).prop_map(|(i, b)| Edit::Insert(i, b)),
        any::<usize>().prop_map(Edit::Delete),
    ];
    prop::collection::vec(edit, 1..8)
}

fn apply(text: &str, edits: &[Edit]) -> String {
    let mut bytes = text.as_bytes().to_vec();
    for edit in edits {
        match *edit {
            Edit::Flip(i, b) if !bytes.is_empty() => {
                let i = i % bytes.len();
                bytes[i] ^= b;
            }
            Edit::Insert(i, b) => {
                let i = i % (bytes.len() + 1);
                bytes.insert(i, b);
            }
            Edit::Delete(i) if !bytes.is_empty() => {
                let i = i % bytes.len();
                bytes.remove(i);
            }
            _ => {}
        }
    }
    String::from_utf8_lossy(&bytes).into_owned()
}

/// The text with its `k`-th number (modulo how many there are) replaced.
fn replace_number(text: &str, k: usize, value: &str) -> String {
    let b = text.as_bytes();
    let mut spans = Vec::new();
    let mut i = 0;
    while i < b.len() {
        let starts =
            b[i].is_ascii_digit() || (b[i] == b'-' && b.get(i + 1).is_some_and(u8::is_ascii_digit));
        if starts && (i == 0 || !b[i - 1].is_ascii_alphanumeric() && b[i - 1] != b'"') {
            let j = i
                + 1
                + b[i + 1..]
                    .iter()
                    .take_while(|c| {
                        c.is_ascii_digit() || matches!(c, b'.' | b'e' | b'E' | b'+' | b'-')
                    })
                    .count();
            spans.push((i, j));
            i = j;
        } else {
            i += 1;
        }
    }
    match spans.get(k % spans.len().max(1)) {
        Some(&(s, e)) => format!("{}{value}{}", &text[..s], &text[e..]),
        None => text.to_string(),
    }
}

/// Parse and, if that works, check: either may refuse, neither may panic.
fn parse_and_validate(text: &str) {
    if let Ok(scenario) = Scenario::from_json(text) {
        let _ = scenario.validate();
        let again = Scenario::from_json(&scenario.to_json_pretty());
        assert!(
            again.is_ok(),
            "a parsed scenario must parse again from its own JSON: {text:?}"
        );
    }
}

/// Read as counts for one and for two species; accepted data passes the
/// checks a fit applies.
fn read_as_counts(text: &str) {
    for species in [&["prey"][..], &["prey", "predator"][..]] {
        let species: Vec<String> = species.iter().map(|s| s.to_string()).collect();
        if let Ok(imported) = read_counts(text, &species, "days", &ImportOptions::default()) {
            assert_eq!(imported.data.validate(species.len()), Ok(()), "{text:?}");
        }
    }
}

#[test]
fn the_seeds_parse() {
    // The mutations below start from inputs that work, so they reach deep.
    for text in SCENARIOS {
        Scenario::from_json(text).unwrap().validate().unwrap();
    }
    assert!(read_counts(
        CSVS[1],
        &["prey".into(), "predator".into()],
        "days",
        &ImportOptions::default()
    )
    .is_ok());
}

#[test]
fn the_number_replacement_finds_numbers() {
    assert_eq!(
        replace_number("{\"a\": [1.5, -2e3]}", 1, "X"),
        "{\"a\": [1.5, X]}"
    );
    assert_eq!(replace_number("{\"a1\": 7}", 0, "X"), "{\"a1\": X}");
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(1000))]

    #[test]
    fn any_bytes_as_a_scenario(bytes in prop::collection::vec(any::<u8>(), 0..512)) {
        parse_and_validate(&String::from_utf8_lossy(&bytes));
    }

    #[test]
    fn any_text_as_a_scenario(text in "\\PC{0,200}") {
        parse_and_validate(&text);
    }

    #[test]
    fn a_damaged_example_scenario(which in 0..SCENARIOS.len(), edits in edits()) {
        parse_and_validate(&apply(SCENARIOS[which], &edits));
    }

    #[test]
    fn an_example_scenario_with_an_odd_number(
        which in 0..SCENARIOS.len(),
        k in any::<usize>(),
        value in odd_value(),
    ) {
        parse_and_validate(&replace_number(SCENARIOS[which], k, &value));
    }

    #[test]
    fn any_bytes_as_counts(bytes in prop::collection::vec(any::<u8>(), 0..512)) {
        read_as_counts(&String::from_utf8_lossy(&bytes));
    }

    #[test]
    fn csv_like_text_as_counts(text in "[0-9a-zA-Z.,;\t\"\n\r eE+-]{0,200}") {
        read_as_counts(&text);
    }

    #[test]
    fn damaged_counts(which in 0..CSVS.len(), edits in edits()) {
        read_as_counts(&apply(CSVS[which], &edits));
    }

    #[test]
    fn counts_with_an_odd_number(which in 0..CSVS.len(), k in any::<usize>(), value in odd_value()) {
        read_as_counts(&replace_number(CSVS[which], k, &value));
    }
}

/// Found by `an_example_scenario_with_an_odd_number`: a repeat spacing of
/// 2.2e-293 made the pulse count overflow u64 (a panic in debug builds,
/// zero pulses in release). It must be refused as too many pulses.
#[test]
fn crash_tiny_repeat_spacing_overflows_the_pulse_count() {
    let json = r#"{"model": "logistic", "params": {"b": 1, "d": 0.1, "K": 10}, "initial": [1],
        "t_end": 10, "events": [{"time": 0, "species": 0, "add": 1, "every": 2.2151342262724665e-293}]}"#;
    let err = tussock_core::Scenario::from_json(json)
        .and_then(|s| s.validate())
        .expect_err("must be refused");
    assert!(err.to_string().contains("pulses"), "{err}");
}
