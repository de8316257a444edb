//! Reading counts from CSV text. The conventions checked are those of
//! RFC 4180 (Shafranovich 2005, Common Format and MIME Type for CSV Files)
//! for quoting and separators, and the spreadsheet convention of `;`
//! separators with a decimal comma in locales that write 3,5 (common
//! practice). Expected values are read off the inputs by hand.

use tussock_core::data::{read_counts, CountData, CountSeries, ImportError, ImportOptions};

fn names(list: &[&str]) -> Vec<String> {
    list.iter().map(|s| s.to_string()).collect()
}

/// Expected outcome of one import.
enum Expect<'a> {
    /// times, then per species (index, counts); and the mapping text.
    Data(&'a [f64], &'a [(usize, &'a [Option<f64>])], &'a str),
    /// The error message contains every fragment.
    Error(&'a [&'a str]),
}

fn check(text: &str, species: &[&str], expect: Expect) {
    let got = read_counts(text, &names(species), "days", &ImportOptions::default());
    match (expect, got) {
        (Expect::Data(times, series, mapping), Ok(imported)) => {
            assert_eq!(imported.data.times, times, "times of {text:?}");
            let want: Vec<(usize, Vec<Option<f64>>)> =
                series.iter().map(|(s, c)| (*s, c.to_vec())).collect();
            let have: Vec<(usize, Vec<Option<f64>>)> = imported
                .data
                .series
                .iter()
                .map(|s| (s.species, s.counts.clone()))
                .collect();
            assert_eq!(have, want, "counts of {text:?}");
            assert_eq!(imported.mapping_text, mapping, "mapping of {text:?}");
        }
        (Expect::Error(fragments), Err(e)) => {
            let message = e.to_string();
            for f in fragments {
                assert!(
                    message.contains(f),
                    "error for {text:?} should contain {f:?}, got: {message}"
                );
            }
        }
        (Expect::Data(..), Err(e)) => panic!("{text:?} should import, got: {e}"),
        (Expect::Error(f), Ok(i)) => panic!("{text:?} should fail with {f:?}, got {:?}", i.data),
    }
}

const PP: &[&str] = &["prey", "predator"];

#[test]
fn columns_are_matched_by_name_in_any_order_and_case() {
    check(
        "day,Predator,PREY\n0,5,60\n1,6,55\n",
        PP,
        Expect::Data(
            &[0.0, 1.0],
            &[(0, &[Some(60.0), Some(55.0)]), (1, &[Some(5.0), Some(6.0)])],
            "time: \"day\"; predator: \"Predator\" (by name); prey: \"PREY\" (by name)",
        ),
    );
}

#[test]
fn unmatched_columns_go_to_species_by_position() {
    check(
        "t,aphids,ladybirds\n0,60,5\n2,80,6\n",
        PP,
        Expect::Data(
            &[0.0, 2.0],
            &[(0, &[Some(60.0), Some(80.0)]), (1, &[Some(5.0), Some(6.0)])],
            "time: \"t\"; prey: \"aphids\" (by position); predator: \"ladybirds\" (by position)",
        ),
    );
    // No header: the first column is time, the rest by position.
    check(
        "0,60\n1.5,70\n",
        &["population"],
        Expect::Data(
            &[0.0, 1.5],
            &[(0, &[Some(60.0), Some(70.0)])],
            "time: \"column 1\"; population: \"column 2\" (by position)",
        ),
    );
    // One species counted out of two.
    check(
        "week,predator\n0,3\n1,4\n",
        PP,
        Expect::Data(
            &[0.0, 1.0],
            &[(1, &[Some(3.0), Some(4.0)])],
            "time: \"week\"; predator: \"predator\" (by name)",
        ),
    );
}

#[test]
fn missing_values_are_kept_as_missing() {
    check(
        "time,prey,predator\n0,60,NA\n1,,5\n2,-,n/a\n3,70,6\n",
        PP,
        Expect::Data(
            &[0.0, 1.0, 2.0, 3.0],
            &[
                (0, &[Some(60.0), None, None, Some(70.0)]),
                (1, &[None, Some(5.0), None, Some(6.0)]),
            ],
            "time: \"time\"; prey: \"prey\" (by name); predator: \"predator\" (by name)",
        ),
    );
}

#[test]
fn semicolons_with_decimal_commas_and_quoted_fields() {
    check(
        "Zeit;prey;predator\r\n0;12,5;1\r\n0,5;13;1,25\r\n",
        PP,
        Expect::Data(
            &[0.0, 0.5],
            &[
                (0, &[Some(12.5), Some(13.0)]),
                (1, &[Some(1.0), Some(1.25)]),
            ],
            "time: \"Zeit\"; prey: \"prey\" (by name); predator: \"predator\" (by name)",
        ),
    );
    // RFC 4180 quoting; a byte-order mark from a spreadsheet is ignored.
    check(
        "\u{feff}\"day\",\"prey, adults\"\n0,\"10\"\n1,\"12\"\n",
        &["prey, adults"],
        Expect::Data(
            &[0.0, 1.0],
            &[(0, &[Some(10.0), Some(12.0)])],
            "time: \"day\"; prey, adults: \"prey, adults\" (by name)",
        ),
    );
}

#[test]
fn bad_files_get_clear_messages() {
    check("", PP, Expect::Error(&["the file is empty"]));
    check("  \n\n", PP, Expect::Error(&["the file is empty"]));
    check(
        "day,prey\n",
        PP,
        Expect::Error(&["header but no data rows"]),
    );
    check(
        "day,prey\n0,5\n",
        PP,
        Expect::Error(&["only one data row (line 2)", "two or more times"]),
    );
    check(
        "day,prey\n0,5\n1,lots\n2,7\n3,x7\n",
        PP,
        Expect::Error(&[
            "2 bad row(s), nothing imported",
            "line 3, column \"prey\": \"lots\" is not a number",
            "line 5, column \"prey\": \"x7\" is not a number",
        ]),
    );
    check(
        "day,prey\n0,5\n1,6\n1,7\n",
        PP,
        Expect::Error(&["line 4, column \"day\": time 1 repeats line 3"]),
    );
    check(
        "day,prey\n0,5\n1,-6\n",
        PP,
        Expect::Error(&["line 3, column \"prey\": count -6 is negative"]),
    );
    check(
        "day,prey\n-1,5\n1,6\n",
        PP,
        Expect::Error(&["line 2, column \"day\": time -1 is negative"]),
    );
    check(
        "day,prey\n0,5\n4,6\n2,7\n",
        PP,
        Expect::Error(&["line 4, column \"day\": time 2 comes after 4 (line 3)"]),
    );
    check(
        "day,prey\n0,5\nsoon,6\n,7\n",
        PP,
        Expect::Error(&[
            "line 3, column \"day\": \"soon\" is not a number",
            "line 4, column \"day\": the time is missing",
        ]),
    );
    check(
        "day,prey\n0,5\n1,6,7\n",
        PP,
        Expect::Error(&["line 3: has 3 cells, the header has 2"]),
    );
    check(
        "day,prey\n0,inf\n1,6\n",
        PP,
        Expect::Error(&["\"inf\" is not a finite number"]),
    );
    check(
        "day;prey\n0;1.234,5\n1;6\n",
        PP,
        Expect::Error(&["\"1.234,5\" is not a number (thousands separators are not read)"]),
    );
    check(
        "day,a,b,c\n0,1,2,3\n1,1,2,3\n",
        PP,
        Expect::Error(&["columns:", "\"a\", \"b\", \"c\""]),
    );
    check(
        "day\n0\n1\n",
        PP,
        Expect::Error(&["columns: found 1 column"]),
    );
    check(
        "day,prey\n0,NA\n1,\n",
        PP,
        Expect::Error(&["column \"prey\" (prey) has no counts"]),
    );
}

#[test]
fn every_bad_row_is_reported_not_only_the_first() {
    let text = "day,prey\n0,a\n1,b\n2,c\n3,d\n";
    let Err(ImportError::BadRows { problems }) =
        read_counts(text, &names(&["prey"]), "days", &ImportOptions::default())
    else {
        panic!("should fail");
    };
    let lines: Vec<u64> = problems.iter().map(|p| p.line).collect();
    assert_eq!(lines, [2, 3, 4, 5]);
}

#[test]
fn chosen_columns_override_the_matching() {
    let options = ImportOptions {
        time_column: Some("Hour".into()),
        species_columns: Some(vec![None, Some("mites".into())]),
    };
    let imported = read_counts(
        "Day,Hour,mites,other\n9,0,3,1\n9,2,4,1\n",
        &names(PP),
        "hours",
        &options,
    )
    .unwrap();
    assert_eq!(imported.data.times, [0.0, 2.0]);
    assert_eq!(imported.data.series.len(), 1);
    assert_eq!(imported.data.series[0].species, 1);
    assert_eq!(
        imported.mapping_text,
        "time: \"Hour\"; predator: \"mites\" (chosen)"
    );
}

#[test]
fn count_data_from_other_sources_is_checked_like_csv() {
    let good = CountData {
        times: vec![0.0, 1.0],
        series: vec![CountSeries {
            species: 0,
            column: "prey".into(),
            counts: vec![Some(1.0), None],
        }],
    };
    assert!(good.validate(2).is_ok());
    let json = serde_json::to_string(&good).unwrap();
    assert_eq!(serde_json::from_str::<CountData>(&json).unwrap(), good);
    let cases: &[(CountData, &str)] = &[
        (
            CountData {
                times: vec![0.0, 0.0],
                ..good.clone()
            },
            "data.times[1]: times must increase",
        ),
        (
            CountData {
                times: vec![1.0],
                ..good.clone()
            },
            "data.times: needs counts at two or more times",
        ),
        (
            CountData {
                series: vec![CountSeries {
                    species: 2,
                    ..good.series[0].clone()
                }],
                ..good.clone()
            },
            "data.series[0].species: no species 2",
        ),
        (
            CountData {
                series: vec![CountSeries {
                    counts: vec![Some(-1.0), None],
                    ..good.series[0].clone()
                }],
                ..good.clone()
            },
            "data.series[0].counts[0]: must be a finite count ≥ 0",
        ),
    ];
    for (data, message) in cases {
        let e = data.validate(2).unwrap_err().to_string();
        assert!(e.contains(message), "{e} should contain {message}");
    }
}
