//! Property tests of the reader: arbitrary bytes never panic; any chunking gives the same
//! table as the whole input; the two-core ingest gives the same table as the sequential
//! parser. Cases are capped so the suite stays fast on a 2-core machine.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]

use plateau::ingest::read_blocks;
use plateau::parse::{parse_bytes, LogParser, ParseOptions};
use plateau::table::RunTable;
use proptest::prelude::*;

/// Tables compared through their debug form (NaN == NaN there, unlike `PartialEq`).
fn repr(t: &RunTable) -> String {
    format!("{t:?}")
}

fn chunked(bytes: &[u8], cuts: &[usize], options: ParseOptions) -> RunTable {
    let mut p = LogParser::new(options);
    let mut cuts: Vec<usize> = cuts.iter().map(|c| c % (bytes.len() + 1)).collect();
    cuts.sort_unstable();
    let mut start = 0;
    for c in cuts {
        p.feed(&bytes[start..c]);
        start = c;
    }
    p.feed(&bytes[start..]);
    p.finish();
    p.into_table()
}

/// Lines of the kinds a real log has, in random order.
fn line() -> impl Strategy<Value = String> {
    let num = prop_oneof![
        (-1000i32..1000).prop_map(|v| v.to_string()),
        (-1e4f64..1e4).prop_map(|v| format!("{v:.3}")),
        (-1e4f64..1e4).prop_map(|v| format!("{v:.6E}").replace('E', "D")),
        Just("nan".to_string()),
        Just("-inf".to_string()),
        Just("****".to_string()),
    ];
    let row = (0u32..400, prop::collection::vec(num, 1..5)).prop_map(|(step, rest)| {
        let mut s = step.to_string();
        for r in rest {
            s.push(' ');
            s.push_str(&r);
        }
        s
    });
    prop_oneof![
        6 => row,
        1 => Just("step temp press".to_string()),
        1 => Just("# step temp press etot".to_string()),
        1 => Just("step,temp".to_string()),
        1 => Just("0,300.5".to_string()),
        1 => Just("WARNING: something odd here".to_string()),
        1 => Just(String::new()),
        1 => Just("DATA 5 6 7".to_string()),
        1 => Just("10 abc 3".to_string()),
        1 => "[ -~]{0,30}",
    ]
}

fn log() -> impl Strategy<Value = Vec<u8>> {
    (
        prop::collection::vec((line(), any::<bool>()), 0..60),
        any::<bool>(),
    )
        .prop_map(|(lines, partial)| {
            let mut out = Vec::new();
            for (l, crlf) in lines {
                out.extend_from_slice(l.as_bytes());
                out.extend_from_slice(if crlf { b"\r\n" } else { b"\n" });
            }
            if partial {
                out.extend_from_slice(b"12 3");
            }
            out
        })
}

fn options() -> impl Strategy<Value = ParseOptions> {
    (any::<bool>(), any::<bool>()).prop_map(|(tag, timestep)| ParseOptions {
        row_tag: tag.then(|| "DATA".to_string()),
        timestep_ps: timestep.then_some(0.002),
        ..ParseOptions::default()
    })
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 128, ..ProptestConfig::default() })]

    #[test]
    fn arbitrary_bytes_never_panic(bytes in prop::collection::vec(any::<u8>(), 0..2000),
                                   cuts in prop::collection::vec(any::<usize>(), 0..8),
                                   opts in options()) {
        let whole = parse_bytes(&bytes, opts.clone());
        let parts = chunked(&bytes, &cuts, opts);
        prop_assert_eq!(repr(&whole), repr(&parts));
    }

    #[test]
    fn any_chunking_gives_the_same_table(bytes in log(),
                                         cuts in prop::collection::vec(any::<usize>(), 0..12),
                                         opts in options()) {
        let whole = parse_bytes(&bytes, opts.clone());
        let parts = chunked(&bytes, &cuts, opts);
        prop_assert_eq!(repr(&whole), repr(&parts));
    }

    /// Fed one line at a time, every row goes through the one-row merge; whole blocks take
    /// the bulk merge of plain rows (and, in blocks of one field count, the by-field copy).
    /// Both must build the same table, restarts included.
    #[test]
    fn bulk_merge_equals_one_row_at_a_time(bytes in log(), block in 1usize..400,
                                           workers in 1usize..4, opts in options()) {
        let mut p = LogParser::new(opts.clone());
        for line in bytes.split_inclusive(|&b| b == b'\n') {
            p.feed(line);
        }
        p.finish();
        let one_by_one = p.into_table();
        let whole = parse_bytes(&bytes, opts.clone());
        prop_assert_eq!(repr(&one_by_one), repr(&whole));
        let size = Some(bytes.len() as u64);
        let ingested = read_blocks(&bytes[..], opts, block, workers, size).unwrap();
        prop_assert_eq!(repr(&one_by_one), repr(&ingested));
    }

    #[test]
    fn two_core_ingest_equals_sequential(bytes in log(), block in 1usize..300, opts in options()) {
        let whole = parse_bytes(&bytes, opts.clone());
        let ingested = read_blocks(&bytes[..], opts, block, 2, None).unwrap();
        prop_assert_eq!(repr(&whole), repr(&ingested));
    }
}

#[test]
fn byte_at_a_time_equals_whole_on_every_fixture() {
    let dir = format!("{}/tests/fixtures/logs", env!("CARGO_MANIFEST_DIR"));
    let mut n = 0;
    for entry in std::fs::read_dir(&dir).unwrap() {
        let bytes = std::fs::read(entry.unwrap().path()).unwrap();
        let whole = parse_bytes(&bytes, ParseOptions::default());
        let mut p = LogParser::new(ParseOptions::default());
        for b in &bytes {
            p.feed(std::slice::from_ref(b));
        }
        p.finish();
        assert_eq!(repr(&whole), repr(&p.into_table()));
        let ingested = read_blocks(&bytes[..], ParseOptions::default(), 7, 2, None).unwrap();
        assert_eq!(repr(&whole), repr(&ingested));
        n += 1;
    }
    assert!(n >= 10);
}

#[test]
fn a_held_line_is_completed_by_the_next_chunk() {
    let mut p = LogParser::new(ParseOptions::default());
    p.feed(b"step temp\n0 300\n10 30");
    assert_eq!(p.table().rows(), 1);
    assert_eq!(p.pending_bytes(), 5);
    p.feed(b"1\n");
    assert_eq!(p.table().rows(), 2);
    assert_eq!(p.table().segments[0].columns[1].values(), [300.0, 301.0]);
    p.finish();
    assert_eq!(p.table().partial_line, None);
}

#[test]
fn an_overlong_line_is_free_text_in_any_chunking() {
    let mut bytes = b"step temp\n0 300\n".to_vec();
    bytes.extend(std::iter::repeat_n(b'7', (1 << 20) + 1000));
    bytes.extend_from_slice(b"\n10 301\n");
    let whole = parse_bytes(&bytes, ParseOptions::default());
    assert_eq!(whole.text_lines, 1);
    assert_eq!(whole.segments[0].lines, [2, 4]);
    let parts = chunked(
        &bytes,
        &[5, 100, 70_000, 1_000_000, 1_050_000],
        ParseOptions::default(),
    );
    assert_eq!(repr(&whole), repr(&parts));
    let ingested = read_blocks(&bytes[..], ParseOptions::default(), 64 << 10, 2, None).unwrap();
    assert_eq!(repr(&whole), repr(&ingested));
}

#[test]
fn reset_starts_over() {
    let mut p = LogParser::new(ParseOptions::default());
    p.feed(b"step temp\n0 300\n1 30");
    p.reset();
    p.feed(b"a b c\n1 2 3\n");
    p.finish();
    let t = p.into_table();
    assert_eq!(t.segments.len(), 1);
    assert_eq!(t.last_segment().unwrap().names.len(), 3);
    assert_eq!(t.partial_line, None);
    assert_eq!(t.lines, 2);
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 128, ..ProptestConfig::default() })]

    /// Command-line and header texts never panic the unit, quantity and mapping readers.
    #[test]
    fn option_texts_never_panic(text in "\\PC{0,24}") {
        use plateau::units::{parse_duration, parse_quantity, parse_time, Dimension, Schedule, Unit};
        let _ = Unit::parse(&text);
        let _ = parse_quantity(&text, Dimension::Energy);
        let _ = parse_time(&text);
        let _ = parse_duration(&text);
        if let Ok(s) = Schedule::parse(&text, Dimension::Temperature, Some(0.002)) {
            let _ = s.value_at(1.0);
        }
        let _ = text.parse::<plateau::mapping::MapRequest>();
        let _ = plateau::mapping::guess_role(&text);
    }

    /// A schedule is linear between its points and held outside them.
    #[test]
    fn schedule_stays_between_its_values(t in -100.0f64..200.0) {
        use plateau::units::{Dimension, Schedule};
        let s = Schedule::parse("0ps=10K,50ps=300K,100ps=200K", Dimension::Temperature, None).unwrap();
        let v = s.value_at(t);
        prop_assert!((10.0..=300.0).contains(&v));
        if t >= 100.0 { prop_assert_eq!(v, 200.0); }
        if t <= 0.0 { prop_assert_eq!(v, 10.0); }
    }
}
