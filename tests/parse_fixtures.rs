//! One invented log per case of the reader: exact rows, values, segments and skipped lines.
//! The fixtures are in `tests/fixtures/logs/` (made by hand for these tests).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]

use plateau::mapping::{MapRequest, Role};
use plateau::parse::{parse_bytes, Delimiter, DelimiterChoice, ParseOptions};
use plateau::table::{PartialLine, Restart, RunTable, Segment, SkipReason, SkippedLine};
use plateau::units::Unit;

fn fixture(name: &str) -> Vec<u8> {
    let path = format!("{}/tests/fixtures/logs/{name}", env!("CARGO_MANIFEST_DIR"));
    std::fs::read(&path).unwrap_or_else(|e| panic!("{path}: {e}"))
}

fn parse(name: &str, options: ParseOptions) -> RunTable {
    parse_bytes(&fixture(name), options)
}

fn col<'a>(seg: &'a Segment, name: &str) -> &'a [f64] {
    seg.columns
        .iter()
        .find(|c| c.spec.name == name)
        .unwrap_or_else(|| panic!("no column {name}"))
        .values()
}

fn names(seg: &Segment) -> Vec<&str> {
    seg.columns.iter().map(|c| c.spec.name.as_str()).collect()
}

fn skipped(line: u64, reason: SkipReason) -> SkippedLine {
    SkippedLine { line, reason }
}

#[test]
fn plain_whitespace_header() {
    let t = parse("plain_whitespace.log", ParseOptions::default());
    assert_eq!(t.segments.len(), 1);
    let s = &t.segments[0];
    assert_eq!(s.header_line, Some(1));
    assert_eq!(s.delimiter, Delimiter::Whitespace);
    assert_eq!(names(s), ["Step", "Time", "Temp", "Press", "Epot"]);
    assert_eq!(s.lines, [2, 3, 4]);
    assert_eq!(col(s, "Step"), [0.0, 100.0, 200.0]);
    assert_eq!(col(s, "Temp"), [300.0, 301.5, 299.0]);
    assert_eq!(col(s, "Press"), [1.0, 0.5, -2.0]);
    assert_eq!(col(s, "Epot"), [-100.0, -101.0, -99.5]);
    let roles: Vec<_> = s.columns.iter().map(|c| c.spec.role).collect();
    assert_eq!(
        roles,
        [
            Some(Role::Step),
            Some(Role::Time),
            Some(Role::Temperature),
            Some(Role::Pressure),
            Some(Role::Potential)
        ]
    );
    // No unit in the header: canonical, marked assumed.
    assert!(s.column(Role::Temperature).unwrap().spec.assumed);
    assert_eq!(t.skipped_count, 0);
    assert_eq!(t.text_lines, 0);
    assert_eq!(t.header_lines, 1);
    assert_eq!(t.partial_line, None);
}

#[test]
fn commented_header_with_units_converts() {
    let t = parse("commented_units.log", ParseOptions::default());
    assert_eq!(t.segments.len(), 1);
    let s = &t.segments[0];
    assert_eq!(s.header_line, Some(2));
    assert!(s.header_commented);
    assert_eq!(
        names(s),
        ["step", "time", "temperature", "pressure", "Total Energy"]
    );
    assert_eq!(s.lines, [3, 4, 5]);
    let p = s.column(Role::Pressure).unwrap();
    assert_eq!(p.spec.source_unit, Some(Unit::Atmosphere));
    assert_eq!(p.spec.unit, Some(Unit::Bar));
    assert!(!p.spec.assumed);
    // 1 atm = 1.01325 bar (exact by definition; NIST SP 811 / units.json "atm_in_bar")
    assert_eq!(p.values(), [1.01325, 0.9 * 1.01325, 1.1 * 1.01325]);
    let e = s.column(Role::Total).unwrap();
    // 1 kcal = 4.184 kJ (thermochemical calorie, exact; units.json "kcal_in_kJ")
    assert_eq!(e.values(), [-500.0 * 4.184, -480.0 * 4.184, -460.0 * 4.184]);
    assert_eq!(t.comment_lines, 1);
}

#[test]
fn comma_table_with_quoted_names() {
    let t = parse("comma_quoted.csv", ParseOptions::default());
    let s = &t.segments[0];
    assert_eq!(s.delimiter, Delimiter::Comma);
    assert_eq!(
        names(s),
        ["Step", "Time", "Temperature", "Potential Energy"]
    );
    assert_eq!(s.columns[3].spec.header_unit.as_deref(), Some("kJ/mol"));
    assert_eq!(s.columns[3].spec.role, Some(Role::Potential));
    assert_eq!(col(s, "Time"), [0.0, 0.02, 0.04]);
    assert_eq!(col(s, "Potential Energy"), [-1000.0, -1001.5, -999.0]);
    assert_eq!(s.lines, [2, 3, 4]);
}

#[test]
fn tab_table_with_spaces_in_names() {
    let t = parse("tab_spaces.tsv", ParseOptions::default());
    let s = &t.segments[0];
    assert_eq!(s.delimiter, Delimiter::Tab);
    assert_eq!(
        names(s),
        ["step", "time", "kinetic energy", "box volume", "density"]
    );
    // 1 eV = 96.4853321233100184 kJ/mol (CODATA 2018 / SI 2019 exact; units.json)
    let k = s.column(Role::Kinetic).unwrap().values();
    assert!((k[0] - 1.5 * 96.485_332_123_310_02).abs() < 1e-12);
    // 1 Å³ = 1e-3 nm³ (definition of the ångström, 1e-10 m)
    let v = s.column(Role::Volume).unwrap().values();
    assert!((v[0] - 27.0).abs() < 1e-12 && (v[1] - 27.1).abs() < 1e-12);
    // 1 g/cm³ = 1000 kg/m³ (SI prefixes)
    assert_eq!(s.column(Role::Density).unwrap().values(), [1000.0, 990.0]);
}

#[test]
fn crlf_line_endings() {
    let t = parse("crlf.log", ParseOptions::default());
    let s = &t.segments[0];
    assert_eq!(names(s), ["step", "temp", "press"]);
    assert_eq!(col(s, "press"), [1.0, 2.0, 3.0]);
    assert_eq!(s.lines, [2, 3, 4]);
    assert_eq!(t.skipped_count, 0);
}

#[test]
fn partial_last_line_is_ignored_and_reported() {
    let t = parse("partial_last_line.log", ParseOptions::default());
    let s = &t.segments[0];
    assert_eq!(col(s, "step"), [0.0, 10.0]);
    assert_eq!(t.partial_line, Some(PartialLine { line: 4, bytes: 5 }));
    assert_eq!(t.lines, 3);
}

#[test]
fn free_text_and_warnings_between_rows() {
    let t = parse("chatty.log", ParseOptions::default());
    assert_eq!(t.segments.len(), 1, "chatter must not start segments");
    let s = &t.segments[0];
    assert_eq!(s.header_line, Some(4));
    assert_eq!(col(s, "step"), [0.0, 10.0, 40.0, 50.0]);
    assert_eq!(col(s, "etot"), [-50.0, -50.1, -50.4, -50.5]);
    assert_eq!(s.lines, [5, 7, 10, 13]);
    assert_eq!(t.skipped_count, 2);
    assert_eq!(
        t.skipped,
        [
            skipped(
                8,
                SkipReason::NotANumber {
                    field: 3,
                    text: "abc".into()
                }
            ),
            skipped(
                9,
                SkipReason::FieldCount {
                    expected: 4,
                    found: 3
                }
            ),
        ]
    );
    // The warning before the table reads as a `key: value` preamble line.
    assert_eq!(t.text_lines, 5);
    assert_eq!(t.metadata_lines, 1);
    assert_eq!(t.blank_lines, 1);
    assert_eq!(t.header_lines, 1);
}

#[test]
fn row_tag_with_tagged_header() {
    let opts = ParseOptions {
        row_tag: Some("DATA".into()),
        ..ParseOptions::default()
    };
    let t = parse("tagged.log", opts);
    assert_eq!(t.segments.len(), 1);
    let s = &t.segments[0];
    assert_eq!(s.header_line, Some(2));
    assert_eq!(names(s), ["step", "temp", "pot"]);
    assert_eq!(col(s, "step"), [0.0, 100.0, 200.0, 400.0]);
    assert_eq!(col(s, "pot"), [-1000.0, -1001.0, -1002.0, -1004.0]);
    assert_eq!(s.lines, [4, 5, 7, 9]);
    assert_eq!(
        t.skipped,
        [
            skipped(
                8,
                SkipReason::FieldCount {
                    expected: 3,
                    found: 2
                }
            ),
            skipped(
                10,
                SkipReason::NotANumber {
                    field: 2,
                    text: "oops".into()
                }
            ),
        ]
    );
    // Untagged lines are free text, even "12 13 14"; `key: value` lines before the first
    // row are a preamble.
    assert_eq!(t.text_lines, 2);
    assert_eq!(t.metadata_lines, 2);
}

#[test]
fn row_tag_with_header_on_the_line_before() {
    let opts = ParseOptions {
        row_tag: Some("THERMO".into()),
        ..ParseOptions::default()
    };
    let t = parse("tagged_header_before.log", opts);
    let s = &t.segments[0];
    assert_eq!(s.header_line, Some(2));
    assert_eq!(names(s), ["step", "temp", "press"]);
    assert_eq!(col(s, "press"), [1.0, 1.5, 0.5]);
    assert_eq!(s.lines, [3, 5, 6]);
    assert_eq!(t.text_lines, 2);
    assert_eq!(t.skipped_count, 0);
}

#[test]
fn repeated_header_and_step_going_back_is_a_restart() {
    let t = parse("restart_repeat_header.log", ParseOptions::default());
    assert_eq!(t.segments.len(), 1);
    let s = &t.segments[0];
    assert_eq!(s.header_repeats, 1);
    assert_eq!(col(s, "step"), [0.0, 10.0, 20.0, 30.0, 40.0]);
    assert_eq!(col(s, "temp"), [300.0, 301.0, 310.0, 311.0, 312.0]);
    assert_eq!(s.lines, [2, 3, 8, 9, 10]);
    assert_eq!(
        s.restarts,
        [Restart {
            line: 8,
            step: 20.0,
            rows_replaced: 2
        }]
    );
    assert_eq!(t.rows_replaced(), 2);
    assert_eq!(t.header_lines, 2);
}

#[test]
fn header_with_different_columns_starts_a_segment() {
    let t = parse("new_segment.log", ParseOptions::default());
    assert_eq!(t.segments.len(), 2);
    assert_eq!(names(&t.segments[0]), ["step", "temp"]);
    assert_eq!(t.segments[0].lines, [3, 4]);
    assert_eq!(col(&t.segments[0], "temp"), [10.0, 50.0]);
    assert_eq!(names(&t.segments[1]), ["step", "temp", "press"]);
    assert_eq!(t.segments[1].header_line, Some(6));
    assert_eq!(t.segments[1].lines, [7, 8, 9]);
    assert_eq!(col(&t.segments[1], "press"), [1.0, 1.5, 0.5]);
    assert!(t.segments[1].restarts.is_empty());
    assert_eq!(t.comment_lines, 2);
}

#[test]
fn nan_and_inf_tokens() {
    let t = parse("nonfinite.log", ParseOptions::default());
    let s = &t.segments[0];
    let temp = col(s, "temp");
    assert_eq!(temp[0], 300.0);
    assert!(temp[1].is_nan());
    assert_eq!(temp[2], f64::INFINITY);
    assert_eq!(temp[3], f64::NEG_INFINITY);
    let etot = col(s, "etot");
    assert!(etot[0].is_nan());
    assert_eq!(etot[3], f64::INFINITY);
    assert_eq!(etot[4], f64::NEG_INFINITY);
    assert_eq!(s.columns[1].non_finite, 3);
    assert_eq!(s.columns[2].non_finite, 3);
    assert_eq!(s.columns[1].overflow, 0);
    assert_eq!(t.skipped_count, 0);
}

#[test]
fn fortran_exponents_and_overflow_fields() {
    let t = parse("fortran.log", ParseOptions::default());
    let s = &t.segments[0];
    assert_eq!(names(s), ["step", "temperature", "etot"]);
    let temp = col(s, "temperature");
    assert_eq!(temp[0], 300.0);
    assert_eq!(temp[1], 301.5);
    assert!(temp[2].is_nan());
    assert_eq!(temp[3], 302.0);
    assert_eq!(col(s, "etot"), [-1234.5, -1234.0, -1233.5, -1.234e-100]);
    assert_eq!(s.columns[1].overflow, 1);
    assert_eq!(s.columns[1].non_finite, 0);
    assert_eq!(t.skipped_count, 0);
}

#[test]
fn rows_with_the_wrong_number_of_fields() {
    let t = parse("wrong_fields.log", ParseOptions::default());
    let s = &t.segments[0];
    assert_eq!(col(s, "step"), [0.0, 30.0, 40.0]);
    assert_eq!(s.lines, [2, 5, 7]);
    let fc = |expected, found| SkipReason::FieldCount { expected, found };
    assert_eq!(
        t.skipped,
        [
            skipped(3, fc(3, 2)),
            skipped(4, fc(3, 4)),
            skipped(6, fc(3, 5))
        ]
    );
}

#[test]
fn no_header_gives_generic_names_and_map_by_index() {
    let t = parse("headerless.log", ParseOptions::default());
    let s = &t.segments[0];
    assert_eq!(s.header_line, None);
    assert_eq!(names(s), ["col1", "col2", "col3"]);
    assert!(s.columns.iter().all(|c| c.spec.role.is_none()));
    let opts = ParseOptions {
        maps: vec![
            "step=1".parse::<MapRequest>().unwrap(),
            "temperature=2:C".parse().unwrap(),
            "potential=3:kcal/mol".parse().unwrap(),
        ],
        ..ParseOptions::default()
    };
    let t = parse("headerless.log", opts);
    let s = &t.segments[0];
    // 0 °C = 273.15 K (SI, exact)
    assert_eq!(
        s.column(Role::Temperature).unwrap().values(),
        [573.15, 574.15, 575.15]
    );
    assert_eq!(
        s.column(Role::Potential).unwrap().values(),
        [-10.0 * 4.184, -11.0 * 4.184, -12.0 * 4.184]
    );
}

#[test]
fn timestep_derives_time_from_step() {
    let opts = ParseOptions {
        timestep_ps: Some(0.002),
        ..ParseOptions::default()
    };
    let t = parse("timestep.log", opts);
    let s = &t.segments[0];
    let time = s.column(Role::Time).unwrap();
    assert_eq!(time.spec.field, None);
    assert_eq!(time.values(), [0.0, 1.0, 2.0]);
}

#[test]
fn other_comment_prefixes() {
    let t = parse("comments_other.log", ParseOptions::default());
    let s = &t.segments[0];
    assert_eq!(s.header_line, Some(5));
    assert_eq!(names(s), ["step", "temp"]);
    assert_eq!(col(s, "temp"), [300.0, 301.0]);
    assert_eq!(t.comment_lines, 4);
    // With only "%" as a comment prefix, the other lines are free text.
    let t = parse(
        "comments_other.log",
        ParseOptions {
            comment_prefixes: vec!["%".into()],
            delimiter: DelimiterChoice::Comma,
            ..ParseOptions::default()
        },
    );
    assert_eq!(t.comment_lines, 1);
    assert_eq!(t.segments[0].lines, [6, 7]);
}

#[test]
fn map_by_name_overrides_guess() {
    let opts = ParseOptions {
        maps: vec!["temperature=Press:K".parse().unwrap()],
        ..ParseOptions::default()
    };
    let t = parse("plain_whitespace.log", opts);
    let s = &t.segments[0];
    let temps: Vec<_> = s
        .columns_with(Role::Temperature)
        .map(|c| c.spec.name.as_str())
        .collect();
    assert_eq!(temps, ["Press"]);
    assert!(t.warnings.is_empty());
    let opts = ParseOptions {
        maps: vec!["temperature=Nope".parse().unwrap()],
        ..ParseOptions::default()
    };
    let t = parse("plain_whitespace.log", opts);
    assert_eq!(t.warnings.len(), 1);
}

#[test]
fn several_columns_can_share_a_role() {
    let log = b"step temp_solute temp_solvent\n0 300 301\n1 302 303\n";
    let t = parse_bytes(log, ParseOptions::default());
    let s = &t.segments[0];
    let temps: Vec<&[f64]> = s
        .columns_with(Role::Temperature)
        .map(|c| c.values())
        .collect();
    assert_eq!(temps, [&[300.0, 302.0][..], &[301.0, 303.0][..]]);
}

#[test]
fn skipped_list_keeps_the_first_hundred() {
    let mut log = String::from("a b\n");
    for i in 0..150 {
        log.push_str(&format!("{i} x\n"));
    }
    let t = parse_bytes(log.as_bytes(), ParseOptions::default());
    assert_eq!(t.skipped_count, 150);
    assert_eq!(t.skipped.len(), 100);
    assert_eq!(t.skipped[99].line, 101);
}

#[test]
fn step_going_back_without_a_header_is_a_restart() {
    let t = parse("restart_step_only.log", ParseOptions::default());
    let s = &t.segments[0];
    assert_eq!(col(s, "step"), [0.0, 100.0, 200.0]);
    assert_eq!(col(s, "temp"), [300.0, 305.0, 306.0]);
    assert_eq!(s.lines, [2, 6, 7]);
    assert_eq!(
        s.restarts,
        [Restart {
            line: 6,
            step: 100.0,
            rows_replaced: 3
        }]
    );
    assert_eq!(s.header_repeats, 0);
}

#[test]
fn time_going_back_is_a_restart_when_there_is_no_step() {
    let t = parse("restart_time_only.log", ParseOptions::default());
    let s = &t.segments[0];
    assert_eq!(col(s, "time"), [0.0, 0.5, 1.0, 1.5]);
    assert_eq!(col(s, "press"), [1.0, 4.0, 5.0, 6.0]);
    assert_eq!(
        s.restarts,
        [Restart {
            line: 5,
            step: 0.5,
            rows_replaced: 2
        }]
    );
}

#[test]
fn same_width_header_with_new_names_starts_a_segment() {
    let t = parse("renamed_columns.log", ParseOptions::default());
    assert_eq!(t.segments.len(), 2);
    assert_eq!(names(&t.segments[1]), ["step", "temp", "volume"]);
    assert_eq!(t.segments[1].header_line, Some(4));
    assert_eq!(t.segments[1].lines, [5, 6]);
    assert_eq!(col(&t.segments[1], "volume"), [27.0, 27.1]);
    assert_eq!(t.segments[0].lines, [2, 3]);
}

#[test]
fn header_survives_a_long_stretch_of_chatter() {
    let mut log = String::from("step temp press\n");
    for i in 0..30 {
        log.push_str(&format!(
            "info: setting up part number {i} of the run now\n"
        ));
        log.push_str("note: nothing to see here\n");
    }
    log.push_str("0 300 1\n10 301 2\n");
    let t = parse_bytes(log.as_bytes(), ParseOptions::default());
    let s = &t.segments[0];
    assert_eq!(s.header_line, Some(1));
    assert_eq!(names(s), ["step", "temp", "press"]);
    assert_eq!(s.lines, [62, 63]);
    // `info: ...` and `note: ...` before the first row read as a preamble.
    assert_eq!(t.text_lines + t.metadata_lines, 60);
}

#[test]
fn a_warning_before_a_broken_row_does_not_start_a_segment() {
    let log = b"step temp press etot\n0 300 1 -5\nWARNING: step too large\n10 301 2\n20 302 3 -6\nNote: list rebuilt\n30 303 4\n40 304 5 -7\n";
    let t = parse_bytes(log, ParseOptions::default());
    assert_eq!(t.segments.len(), 1);
    let s = &t.segments[0];
    assert_eq!(col(s, "step"), [0.0, 20.0, 40.0]);
    let fc = SkipReason::FieldCount {
        expected: 4,
        found: 3,
    };
    assert_eq!(t.skipped, [skipped(4, fc.clone()), skipped(7, fc)]);
    assert_eq!(t.text_lines, 2);
}

#[test]
fn whitespace_header_with_spaces_in_names() {
    let t = parse("wide_names.log", ParseOptions::default());
    let s = &t.segments[0];
    assert_eq!(
        names(s),
        [
            "Step",
            "Potential Energy",
            "Kinetic En.",
            "Total Energy",
            "Temperature"
        ]
    );
    let roles: Vec<_> = s.columns.iter().map(|c| c.spec.role).collect();
    assert_eq!(
        roles,
        [
            Some(Role::Step),
            Some(Role::Potential),
            Some(Role::Kinetic),
            Some(Role::Total),
            Some(Role::Temperature)
        ]
    );
    assert_eq!(col(s, "Kinetic En."), [3740.2, 3745.8]);
    assert_eq!(s.lines, [2, 3]);
}

#[test]
fn a_comment_at_the_end_of_a_row_ends_it() {
    let log = b"step temp press\n0 300 1.0  # heating done\n10 301 2.0 #\n20 302 # cut\n";
    let t = parse_bytes(log, ParseOptions::default());
    let s = &t.segments[0];
    assert_eq!(col(s, "press"), [1.0, 2.0]);
    assert_eq!(
        t.skipped,
        [skipped(
            4,
            SkipReason::FieldCount {
                expected: 3,
                found: 2
            }
        )]
    );
}
