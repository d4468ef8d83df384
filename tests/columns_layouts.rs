//! `plateau columns` output, one snapshot per layout class the reader finds by itself (no
//! option given): what a user sees first on a log plateau was never told about. Each log
//! is invented here, 40 rows of plausible values; the snapshots are reviewed by eye when
//! they change (`INSTA_UPDATE=always cargo test --test columns_layouts`, then `git diff`).
//! The generality of the reader is shown by `tests/layout_generator.rs`; these pin the
//! wording and the explanations (`from`, the map line, hints).

#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use assert_cmd::Command;

const ROWS: u32 = 40;

/// Row `i` of an invented run: step, time (ps), temperature (K), pressure (bar),
/// potential energy (kJ/mol).
fn values(i: u32) -> (u32, f64, f64, f64, f64) {
    let wobble = |k: u32, m: u32| f64::from((i * k) % m) / f64::from(m) - 0.5;
    (
        i * 500,
        f64::from(i) * 1.0,
        300.0 + 4.0 * wobble(7919, 13),
        1.0 + 150.0 * wobble(104_729, 17),
        -41_500.0 + 60.0 * wobble(1_299_709, 19),
    )
}

/// `plateau columns NAME` on `bytes` written as NAME in a fresh folder.
fn columns(name: &str, bytes: &[u8]) -> String {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join(name), bytes).unwrap();
    let out = Command::cargo_bin("plateau")
        .unwrap()
        .current_dir(dir.path())
        .args(["columns", name])
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{name}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).unwrap()
}

fn lines(f: impl Fn(u32) -> String) -> String {
    (0..ROWS).map(f).collect()
}

#[test]
fn semicolons_behind_a_key_value_preamble() {
    let mut s = String::from("title = invented water box\nengine version: 7.1\nseed = 12345\n\n");
    s.push_str("step;time;temp;press;epot\n");
    s.push_str(&lines(|i| {
        let (n, t, temp, p, e) = values(i);
        format!("{n};{t:.1};{temp:.2};{p:.1};{e:.1}\n")
    }));
    insta::assert_snapshot!(columns("box.log", s.as_bytes()));
}

#[test]
fn a_drawn_table_with_rule_lines_and_outer_bars() {
    let mut s = String::from("+------+-------+--------+--------+\n");
    s.push_str("| Step | T (K) | P(bar) | E_pot  |\n");
    s.push_str("+======+=======+========+========+\n");
    s.push_str(&lines(|i| {
        let (n, _, temp, p, e) = values(i);
        format!("| {n} | {temp:.2} | {p:.1} | {e:.1} |\n")
    }));
    s.push_str("+------+-------+--------+--------+\n");
    insta::assert_snapshot!(columns("table.txt", s.as_bytes()));
}

#[test]
fn a_tagged_header_with_a_units_line() {
    let mut s = String::from("starting the run\nread 3000 atoms\n");
    s.push_str("THERMO: step time temperature pressure potential\n");
    s.push_str("THERMO: - [ps] [K] [bar] [kJ/mol]\n");
    s.push_str(&lines(|i| {
        let (n, t, temp, p, e) = values(i);
        let note = if i % 10 == 9 {
            "neighbour list rebuilt\n"
        } else {
            ""
        };
        format!("THERMO: {n} {t:.1} {temp:.2} {p:.1} {e:.1}\n{note}")
    }));
    insta::assert_snapshot!(columns("tagged.out", s.as_bytes()));
}

#[test]
fn a_header_behind_a_label_and_repeated() {
    let mut s = String::new();
    for i in 0..ROWS {
        if i % 20 == 0 {
            s.push_str("Columns: iter Etot/kcal_mol T_K Press_atm\n");
        }
        let (n, _, temp, p, e) = values(i);
        s.push_str(&format!("{n} {:.3} {temp:.2} {p:.2}\n", e / 4.184));
    }
    insta::assert_snapshot!(columns("repeat.log", s.as_bytes()));
}

#[test]
fn rows_that_carry_their_own_names() {
    let json = lines(|i| {
        let (n, t, temp, p, e) = values(i);
        let extra = if i == 5 {
            "{\"event\": \"checkpoint written\"}\n".to_string()
        } else {
            String::new()
        };
        format!(
            "{extra}{{\"step\": {n}, \"time_ps\": {t:.1}, \"temp_K\": {temp:.2}, \"press_bar\": {p:.1}, \"epot_kJmol\": {e:.1}}}\n"
        )
    });
    insta::assert_snapshot!("json_lines", columns("run.jsonl", json.as_bytes()));
    let pairs = lines(|i| {
        let (n, t, temp, p, _) = values(i);
        format!("step={n} time={t:.1} T={temp:.2} P={p:.1}\n")
    });
    insta::assert_snapshot!("name_value_pairs", columns("pairs.log", pairs.as_bytes()));
}

#[test]
fn crlf_and_lone_cr_line_ends() {
    let mut s = String::from("# step time temp press\r\n");
    s.push_str(&lines(|i| {
        let (n, t, temp, p, _) = values(i);
        let end = if i % 2 == 0 { "\r\n" } else { "\r" };
        format!("{n}\t{t:.1}\t{temp:.2}\t{p:.1}{end}")
    }));
    insta::assert_snapshot!(columns("endings.log", s.as_bytes()));
}

#[test]
fn latin1_units_a_byte_order_mark_and_quoted_csv() {
    let mut latin1 = b"step,T,V\n,(\xb0C),(nm^3)\n".to_vec();
    for i in 0..ROWS {
        let (n, _, temp, _, _) = values(i);
        latin1.extend_from_slice(
            format!(
                "{n},{:.2},{:.3}\n",
                temp - 273.15,
                27.0 + f64::from(i % 3) * 0.01
            )
            .as_bytes(),
        );
    }
    insta::assert_snapshot!("latin1_units_line", columns("latin1.csv", &latin1));

    let mut quoted =
        "\u{feff}\"Step\",\"Time (ps)\",\"Temperature (K)\",\"Potential (kJ/mol)\"\n".to_string();
    quoted.push_str(&lines(|i| {
        let (n, t, temp, _, e) = values(i);
        format!("\"{n}\",\"{t:.1}\",\"{temp:.2}\",\"{e:.1}\"\n")
    }));
    insta::assert_snapshot!(
        "quoted_csv_with_bom",
        columns("quoted.csv", quoted.as_bytes())
    );
}

#[test]
fn counters_found_from_the_data() {
    let mut s = String::from("a b c d\n");
    s.push_str(&lines(|i| {
        let (n, t, temp, p, _) = values(i);
        format!("{n} {:.3} {temp:.2} {p:.1}\n", t * 0.002 * 500.0)
    }));
    insta::assert_snapshot!(columns("plain.dat", s.as_bytes()));
}
