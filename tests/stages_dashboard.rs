//! The stages on the dashboard, without a terminal (ratatui's TestBackend): the invented
//! five-stage preparation (src/scenario/stages.rs) fed by hand at 20 lines a second, drawn
//! while it heats and once it is over. The overview shows the stage each staged run is in;
//! the run's screen lists the stages with their rows, times and verdicts, and its verdict
//! line is the current stage's.

#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use ratatui::backend::TestBackend;
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::Terminal;

use plateau::analysis::AnalysisOptions;
use plateau::live::{LiveRun, RunId, RunSource, RunSpec};
use plateau::parse::ParseOptions;
use plateau::scenario::stages::{five_stage_logs, StagePlan};
use plateau::scenario::{write_log, LogStyle, Scenario, ScenarioSpec};
use plateau::tui::app::{App, Screen};
use plateau::tui::model::{self, Snapshot};
use plateau::tui::theme::Theme;
use plateau::tui::ui::Dashboard;

const T0: f64 = 1_800_000_000.0;

fn new_run(id: usize, label: &str) -> LiveRun {
    LiveRun::new(
        RunId(id),
        RunSpec::new(RunSource::Path(label.into())),
        ParseOptions::default(),
        Some(AnalysisOptions::default()),
        1_000_000,
    )
}

/// Feeds lines `from..to` of `text`, 20 a second from `T0`.
fn feed(run: &mut LiveRun, text: &str, from: usize, to: usize) {
    let lines: Vec<&str> = text.split_inclusive('\n').collect();
    let to = to.min(lines.len());
    for (i, chunk) in lines[from..to].chunks(20).enumerate() {
        run.push_lines(chunk.concat().as_bytes(), T0 + (from / 20 + i) as f64);
        run.analyse();
    }
}

fn plain_run(id: usize) -> LiveRun {
    let mut run = new_run(id, "runs/plain/md.log");
    let spec = ScenarioSpec::new(Scenario::Equilibration, LogStyle::Whitespace, 600);
    let mut text = Vec::new();
    write_log(&spec, &mut text).unwrap();
    feed(&mut run, std::str::from_utf8(&text).unwrap(), 0, usize::MAX);
    run
}

fn snapshot(runs: &[LiveRun], app: &mut App, w: u16, h: u16, now: f64) -> Snapshot {
    let s = model::build(runs, &[], app, Rect::new(0, 0, w, h), now);
    app.sync(s.order(), s.quantity_names());
    model::build(runs, &[], app, Rect::new(0, 0, w, h), now)
}

fn draw(s: &Snapshot) -> Buffer {
    let mut term = Terminal::new(TestBackend::new(s.size.width, s.size.height)).unwrap();
    let theme = Theme::plain();
    term.draw(|f| {
        f.render_widget(
            &Dashboard {
                snapshot: s,
                theme: &theme,
            },
            f.area(),
        )
    })
    .unwrap();
    term.backend().buffer().clone()
}

fn lines(buf: &Buffer) -> Vec<String> {
    let area = buf.area;
    (0..area.height)
        .map(|y| {
            let l: String = (0..area.width)
                .map(|x| buf[(x, y)].symbol().to_string())
                .collect();
            l.trim_end().to_string()
        })
        .collect()
}

fn find<'a>(lines: &'a [String], needle: &str) -> &'a str {
    lines
        .iter()
        .find(|l| l.contains(needle))
        .unwrap_or_else(|| panic!("no line with {needle:?} in\n{}", lines.join("\n")))
}

#[test]
fn while_heating_the_overview_and_the_run_screen_say_so() {
    let logs = five_stage_logs(&StagePlan::default());
    let t = &logs.truth;
    // The minimization (with its header) and half of the ramp: one line per row plus the
    // two headers.
    let upto = t.heating_row + (t.ramp_end_row - t.heating_row) / 2 + 2;
    let mut staged = new_run(0, "prep/prep.log");
    feed(&mut staged, &logs.one_log, 0, upto);
    let runs = vec![staged, plain_run(1)];
    let now = T0 + 40.0;

    // Overview: a stage column; the staged run heats (stage 2 of 2 so far), the plain run
    // has no stages to tell.
    let mut app = App::new(runs.len(), false);
    let s = snapshot(&runs, &mut app, 80, 24, now);
    let text = lines(&draw(&s));
    assert!(find(&text, "RUN").contains("STAGE"), "{text:#?}");
    assert!(find(&text, "prep.log").contains("heat 2/2"), "{text:#?}");
    let plain = find(&text, "plain/md.log");
    assert!(
        !plain.contains("heat") && !plain.contains("prod"),
        "{plain}"
    );
    // Wider: the whole word.
    let s = snapshot(&runs, &mut app, 120, 40, now);
    assert!(find(&lines(&draw(&s)), "prep.log").contains("heating 2/2"));

    // The run's screen: the verdict is the heating stage's; both stages listed.
    let mut app = App::new(1, false);
    let one = &runs[..1];
    let s = snapshot(one, &mut app, 80, 24, now);
    assert_eq!(s.screen, Screen::Detail);
    let d = s.detail.as_ref().unwrap();
    assert_eq!(d.stages.len(), 2);
    assert!(
        d.verdict.starts_with("heating (stage 2/2)"),
        "{}",
        d.verdict
    );
    let text = lines(&draw(&s));
    assert!(find(&text, " stages · 2").starts_with(" stages"));
    let min = find(&text, "minimization");
    assert!(min.contains("rows 0–149"), "{min}");
    assert!(min.ends_with("converged"), "{min}");
    let heat = find(&text, "▸ 2 heating");
    assert!(heat.contains("constant volume"), "{heat}");
    assert!(heat.contains(" ps"), "{heat}");
}

#[test]
fn once_over_the_five_stages_are_listed_with_their_verdicts() {
    let logs = five_stage_logs(&StagePlan::default());
    let mut run = new_run(0, "prep/prep.log");
    feed(&mut run, &logs.one_log, 0, usize::MAX);
    run.conclude();
    let runs = vec![run];
    let mut app = App::new(1, false);
    let s = snapshot(&runs, &mut app, 100, 30, T0 + 200.0);
    let d = s.detail.as_ref().unwrap();
    let words: Vec<(&str, &str)> = d
        .stages
        .iter()
        .map(|l| (l.kind.name(), l.verdict.as_str()))
        .collect();
    assert_eq!(
        words,
        vec![
            ("minimization", "converged"),
            ("heating", "followed-ramp"),
            ("equilibration", "equilibrated"),
            ("equilibration", "equilibrated"),
            ("production", "equilibrated"),
        ]
    );
    assert!(d.stages.iter().all(|l| !l.current), "the run is over");
    assert!(
        d.verdict.starts_with("production (stage 5/5)"),
        "{}",
        d.verdict
    );
    let text = lines(&draw(&s));
    let prod = find(&text, "5 production");
    assert!(prod.contains("constant pressure"), "{prod}");
    assert!(prod.ends_with("equilibrated"), "{prod}");
    insta::assert_snapshot!("stages_detail_100x30", text.join("\n"));
}
