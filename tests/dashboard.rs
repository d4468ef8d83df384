//! The dashboard without a terminal: whole screens drawn from runs fed by hand (fixed
//! arrival times and a fixed "now", so every frame is reproducible) as text snapshots at
//! 80×24, 120×40 and tiny sizes; styles asserted on cells (text snapshots drop them);
//! state changed by keys and new rows, then drawn again.
//!
//! The runs are the repository's invented scenarios (`plateau::scenario`). Clock times
//! (local time zone) are masked in the snapshots.

#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use ratatui::backend::TestBackend;
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::style::{Color, Modifier};
use ratatui::Terminal;

use plateau::alert::Thresholds;
use plateau::analysis::AnalysisOptions;
use plateau::live::{LiveRun, RunId, RunSource, RunSpec};
use plateau::parse::ParseOptions;
use plateau::scenario::{write_log, LogStyle, Scenario, ScenarioSpec};
use plateau::tui::app::{App, Screen};
use plateau::tui::model::{self, Condition, Snapshot};
use plateau::tui::theme::Theme;
use plateau::tui::ui::Dashboard;

/// The Unix second the first rows arrive at.
const T0: f64 = 1_800_000_000.0;

fn options(until_ps: Option<f64>) -> AnalysisOptions {
    AnalysisOptions {
        thresholds: Thresholds::default(),
        until_ps,
        ..AnalysisOptions::default()
    }
}

fn log(scenario: Scenario, rows: u64) -> Vec<u8> {
    let spec = ScenarioSpec::new(scenario, LogStyle::Whitespace, rows);
    let mut text = Vec::new();
    write_log(&spec, &mut text).unwrap();
    text
}

/// A run fed `rows` rows of a scenario, 20 rows a second from `T0`.
fn run(id: usize, label: &str, scenario: Scenario, rows: u64) -> LiveRun {
    let mut run = LiveRun::new(
        RunId(id),
        RunSpec {
            source: RunSource::Path(label.into()),
            label: label.to_string(),
            found_by: None,
            job: None,
        },
        ParseOptions::default(),
        Some(options(Some(10_000.0))),
        10_000,
    );
    feed(&mut run, &log(scenario, rows), 0);
    run
}

/// Feeds the complete lines of `text` from line `from`, 20 lines per second of arrival.
fn feed(run: &mut LiveRun, text: &[u8], from: usize) {
    let lines: Vec<&[u8]> = text.split_inclusive(|&b| b == b'\n').collect();
    for (i, chunk) in lines.chunks(20).enumerate().skip(from / 20) {
        let bytes: Vec<u8> = chunk.concat();
        run.push_lines(&bytes, T0 + i as f64);
        run.analyse();
    }
}

fn runs() -> Vec<LiveRun> {
    vec![
        run(
            0,
            "runs/equilibration/md.log",
            Scenario::Equilibration,
            2000,
        ),
        run(1, "runs/blow-up/md.log", Scenario::BlowUp, 2000),
        run(2, "runs/nve/md.log", Scenario::NveDrift, 2000),
        run(
            3,
            "runs/thermostat/md.log",
            Scenario::ThermostatFailure,
            1500,
        ),
    ]
}

/// "Now": ten seconds after the last row of the longest run arrived.
const NOW: f64 = T0 + 110.0;

fn snapshot(runs: &[LiveRun], app: &mut App, w: u16, h: u16) -> Snapshot {
    let s = model::build(runs, &[], app, Rect::new(0, 0, w, h), NOW);
    app.sync(s.order(), s.quantity_names());
    // Build again so that the selection follows what was drawn.
    model::build(runs, &[], app, Rect::new(0, 0, w, h), NOW)
}

fn draw(s: &Snapshot, theme: &Theme) -> Buffer {
    let mut term = Terminal::new(TestBackend::new(s.size.width, s.size.height)).unwrap();
    term.draw(|f| f.render_widget(&Dashboard { snapshot: s, theme }, f.area()))
        .unwrap();
    term.backend().buffer().clone()
}

fn text(buf: &Buffer) -> String {
    let area = buf.area;
    let mut out = String::new();
    for y in 0..area.height {
        let line: String = (0..area.width)
            .map(|x| buf[(x, y)].symbol().to_string())
            .collect();
        out.push_str(line.trim_end());
        out.push('\n');
    }
    out
}

fn key(app: &mut App, code: KeyCode) {
    app.on_key(&KeyEvent::new(code, KeyModifiers::NONE));
}

macro_rules! screen_snapshot {
    ($name:expr, $text:expr) => {
        insta::with_settings!({filters => vec![(r"\d\d:\d\d:\d\d", "hh:mm:ss")]}, {
            insta::assert_snapshot!($name, $text);
        });
    };
}

#[test]
fn overview_at_80x24_puts_the_runs_needing_a_look_first() {
    let runs = runs();
    let mut app = App::new(runs.len(), false);
    let s = snapshot(&runs, &mut app, 80, 24);
    assert_eq!(s.runs[0].condition, Condition::Unstable, "{:?}", s.order());
    let buf = draw(&s, &Theme::colored());
    screen_snapshot!("overview_80x24", text(&buf));
}

#[test]
fn overview_at_120x40() {
    let runs = runs();
    let mut app = App::new(runs.len(), false);
    let s = snapshot(&runs, &mut app, 120, 40);
    screen_snapshot!("overview_120x40", text(&draw(&s, &Theme::colored())));
}

#[test]
fn one_run_at_80x24_and_120x40() {
    let runs = vec![run(0, "md.log", Scenario::Equilibration, 2000)];
    let mut app = App::new(1, false);
    assert_eq!(app.screen, Screen::Detail);
    let s = snapshot(&runs, &mut app, 80, 24);
    screen_snapshot!("detail_80x24", text(&draw(&s, &Theme::colored())));
    let s = snapshot(&runs, &mut app, 120, 40);
    screen_snapshot!("detail_120x40", text(&draw(&s, &Theme::colored())));
}

#[test]
fn a_blow_up_at_80x24_lists_its_alerts_newest_first() {
    let runs = vec![run(0, "md.log", Scenario::BlowUp, 2000)];
    let mut app = App::new(1, false);
    let s = snapshot(&runs, &mut app, 80, 24);
    let d = s.detail.as_ref().unwrap();
    assert_eq!(d.condition, Condition::Unstable);
    let rows: Vec<u64> = d.alerts.iter().filter_map(|a| a.row).collect();
    assert!(!rows.is_empty());
    let walls: Vec<f64> = d.alerts.iter().filter_map(|a| a.wall).collect();
    assert!(
        walls.windows(2).all(|w| w[0] >= w[1]),
        "newest first: {walls:?}"
    );
    screen_snapshot!("blow_up_80x24", text(&draw(&s, &Theme::colored())));
}

#[test]
fn help_at_80x24() {
    let runs = runs();
    let mut app = App::new(runs.len(), false);
    key(&mut app, KeyCode::Char('?'));
    let s = snapshot(&runs, &mut app, 80, 24);
    let t = text(&draw(&s, &Theme::colored()));
    assert!(t.contains("quit") && t.contains("suspend"), "{t}");
    screen_snapshot!("help_80x24", t);
}

#[test]
fn tiny_terminals_get_one_clear_line() {
    let runs = runs();
    for (w, h) in [(1u16, 1u16), (20, 5), (39, 24), (80, 9)] {
        let mut app = App::new(runs.len(), false);
        let s = snapshot(&runs, &mut app, w, h);
        let t = text(&draw(&s, &Theme::colored()));
        // The message, wrapped to the width, and nothing else.
        let words: String = t.split_whitespace().collect::<Vec<_>>().join(" ");
        if w >= 20 {
            assert!(words.starts_with("terminal too small"), "{w}x{h}: {t}");
            assert!(words.contains("q quits") || h < 5, "{w}x{h}: {t}");
        }
        assert!(!t.contains("STATUS"), "{w}x{h}: {t}");
    }
    let mut app = App::new(runs.len(), false);
    let s = snapshot(&runs, &mut app, 30, 6);
    screen_snapshot!("too_small_30x6", text(&draw(&s, &Theme::colored())));
    // The smallest usable size draws everything inside the screen.
    let mut app = App::new(runs.len(), false);
    key(&mut app, KeyCode::Enter);
    let s = snapshot(&runs, &mut app, 40, 10);
    screen_snapshot!("detail_40x10", text(&draw(&s, &Theme::colored())));
}

#[test]
fn alert_severities_are_styled_and_readable_without_colour() {
    let runs = vec![run(0, "md.log", Scenario::BlowUp, 2000)];
    let mut app = App::new(1, false);
    let s = snapshot(&runs, &mut app, 100, 30);
    for (theme, colored) in [(Theme::colored(), true), (Theme::plain(), false)] {
        let buf = draw(&s, &theme);
        let t = text(&buf);
        // The first alert line: the marker's cells.
        let y = t.lines().position(|l| l.contains("✗ CRIT")).unwrap() as u16;
        let x = t
            .lines()
            .nth(usize::from(y))
            .unwrap()
            .chars()
            .position(|c| c == '✗')
            .unwrap() as u16;
        let cell = &buf[(x, y)];
        assert!(
            cell.modifier.contains(Modifier::BOLD | Modifier::REVERSED),
            "{cell:?}"
        );
        assert_eq!(cell.fg, if colored { Color::Red } else { Color::Reset });
        // The status in the header: a symbol and a word, reverse video when unstable.
        assert!(t.starts_with(" ✗ unstable "), "{t}");
        assert!(buf[(1, 0)].modifier.contains(Modifier::REVERSED));
        if !colored {
            // No colour anywhere: NO_COLOR sends none.
            let area = buf.area;
            for y in 0..area.height {
                for x in 0..area.width {
                    let c = &buf[(x, y)];
                    assert_eq!(
                        (c.fg, c.bg),
                        (Color::Reset, Color::Reset),
                        "({x},{y}) {c:?}"
                    );
                }
            }
        }
    }
}

#[test]
fn keys_and_new_rows_change_what_is_drawn() {
    let text_eq = log(Scenario::Equilibration, 3000);
    let mut r = LiveRun::new(
        RunId(0),
        RunSpec::new(RunSource::Path("md.log".into())),
        ParseOptions::default(),
        Some(options(None)),
        10_000,
    );
    let head: Vec<u8> = {
        let lines: Vec<&[u8]> = text_eq.split_inclusive(|&b| b == b'\n').collect();
        lines[..1000].concat()
    };
    r.push_lines(&head, T0);
    r.analyse();
    let mut runs = vec![r];
    let mut app = App::new(1, false);
    let s = snapshot(&runs, &mut app, 80, 24);
    let d = s.detail.as_ref().unwrap();
    let rows_before = d.chart.as_ref().unwrap().rows;
    let first = d.quantities[0].name_raw.clone();
    let second = d.quantities[1].name_raw.clone();
    assert_eq!(d.charted, 0);

    // ↓ charts the next quantity.
    key(&mut app, KeyCode::Down);
    let s = snapshot(&runs, &mut app, 80, 24);
    let d = s.detail.as_ref().unwrap();
    assert_eq!(d.quantities[d.charted].name_raw, second);
    assert!(
        text(&draw(&s, &Theme::plain())).contains(&format!("2/{} {second}", d.quantities.len()))
    );

    // `+` narrows the latest window: the x range is 200 rows wide.
    key(&mut app, KeyCode::Char('+'));
    let s = snapshot(&runs, &mut app, 80, 24);
    let c = s.detail.as_ref().unwrap().chart.clone().unwrap();
    assert_eq!(c.to_row - c.from_row, 200);
    assert!(text(&draw(&s, &Theme::plain())).contains("[latest 200 rows]"));

    // New rows arrive: the chart and the row count follow.
    let rest: Vec<u8> = {
        let lines: Vec<&[u8]> = text_eq.split_inclusive(|&b| b == b'\n').collect();
        lines[1000..1500].concat()
    };
    runs[0].push_lines(&rest, T0 + 10.0);
    runs[0].analyse();
    let s = snapshot(&runs, &mut app, 80, 24);
    let c = s.detail.as_ref().unwrap().chart.clone().unwrap();
    assert_eq!(c.rows, rows_before + 500);
    assert!(c.to_row >= c.rows && c.from_row < c.rows, "{c:?}");

    // `1` charts the first quantity again; `z` gives the chart the whole screen.
    key(&mut app, KeyCode::Char('1'));
    key(&mut app, KeyCode::Char('z'));
    let s = snapshot(&runs, &mut app, 80, 24);
    let t = text(&draw(&s, &Theme::plain()));
    assert!(t.contains("1/") && t.contains(&first), "{t}");
    assert!(!t.contains("alerts ·"), "chart only: {t}");
}

#[test]
fn text_from_the_log_is_shown_with_control_characters_escaped() {
    let mut r = LiveRun::new(
        RunId(0),
        RunSpec::new(RunSource::Path("evil\u{1b}[2J.log".into())),
        ParseOptions::default(),
        Some(options(None)),
        10_000,
    );
    let mut text_log = String::from("# step time temp\u{1b}[31m pot\u{202e}\n");
    for i in 0..300 {
        text_log.push_str(&format!(
            "{} {} {} {}\n",
            i * 10,
            i as f64 * 0.02,
            300.0 + (i % 7) as f64,
            -100.0 - (i % 5) as f64
        ));
    }
    r.push_lines(text_log.as_bytes(), T0);
    r.analyse();
    let runs = vec![r];
    let mut app = App::new(1, false);
    let s = snapshot(&runs, &mut app, 100, 30);
    let buf = draw(&s, &Theme::plain());
    let t = text(&buf);
    assert!(t.contains("evil\\x1b[2J.log"), "{t}");
    let area = buf.area;
    for y in 0..area.height {
        for x in 0..area.width {
            let sym = buf[(x, y)].symbol();
            assert!(
                !sym.chars().any(|c| c.is_control() || c == '\u{202e}'),
                "raw control at ({x},{y})"
            );
        }
    }
}
