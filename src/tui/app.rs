//! The dashboard's own state (what is selected, which view, paused...) and how keys change
//! it. No terminal and no I/O here: [`App::on_key`] returns the [`Effect`]s the main loop
//! carries out (write a report, quit, suspend), so every state change is tested without a
//! terminal.

use std::collections::BTreeMap;

use crossterm::event::KeyEvent;

use crate::live::RunId;

use super::keys::{action, Action};

/// Which screen is shown.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Screen {
    /// One line per run.
    Overview,
    /// One run in full.
    Detail,
}

/// What the trend chart shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ChartView {
    /// Every row of the analysed segment.
    All,
    /// From the equilibration onset on.
    Production,
    /// The latest rows (a window the `+`/`-` keys narrow and widen).
    Window,
}

impl ChartView {
    fn next(self) -> ChartView {
        match self {
            ChartView::All => ChartView::Production,
            ChartView::Production => ChartView::Window,
            ChartView::Window => ChartView::All,
        }
    }
}

/// Rows in the latest window at start.
pub const DEFAULT_WINDOW_ROWS: u64 = 400;
/// The narrowest latest window.
pub const MIN_WINDOW_ROWS: u64 = 25;
/// The widest latest window.
pub const MAX_WINDOW_ROWS: u64 = 1 << 24;

/// Something the main loop must do after a key.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Effect {
    /// Draw again (the state changed).
    Redraw,
    /// Clear the terminal and draw everything again.
    FullRedraw,
    /// Write this run's report to a file.
    WriteReport(RunId),
    /// Stop until continued (Ctrl-Z).
    Suspend,
    Quit,
}

/// A line shown after an action (report written, or why not), until the next key.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Message {
    pub text: String,
    pub ok: bool,
}

/// The dashboard's state.
#[derive(Debug, Clone, PartialEq)]
pub struct App {
    pub screen: Screen,
    /// The run selected in the overview, and shown in the detail.
    pub selected: Option<RunId>,
    /// The charted quantity of each run, by column name.
    pub quantity: BTreeMap<RunId, String>,
    pub view: ChartView,
    pub window_rows: u64,
    /// The chart alone on the screen.
    pub chart_only: bool,
    pub help: bool,
    pub paused: bool,
    /// Alerts scrolled past (0: the newest on top).
    pub alert_scroll: usize,
    pub message: Option<Message>,
    /// Runs in the overview's order, as last drawn (keys follow what the user sees).
    pub order: Vec<RunId>,
    /// The selected run's quantities, as last drawn.
    pub quantities: Vec<String>,
    /// An overview exists (several runs, or a pattern that may find more).
    pub overview: bool,
    pub quit: bool,
}

impl App {
    /// The state at start: the overview when there are several runs (or patterns that may
    /// find more), else the one run's detail.
    pub fn new(runs: usize, patterns: bool) -> App {
        let overview = runs != 1 || patterns;
        App {
            screen: if overview {
                Screen::Overview
            } else {
                Screen::Detail
            },
            selected: (runs > 0).then_some(RunId(0)),
            quantity: BTreeMap::new(),
            view: ChartView::All,
            window_rows: DEFAULT_WINDOW_ROWS,
            chart_only: false,
            help: false,
            paused: false,
            alert_scroll: 0,
            message: None,
            order: Vec::new(),
            quantities: Vec::new(),
            overview,
            quit: false,
        }
    }

    /// Takes in what was drawn: the overview's order and the selected run's quantities.
    pub fn sync(&mut self, order: Vec<RunId>, quantities: Vec<String>) {
        if self.selected.is_none_or(|s| !order.contains(&s)) {
            self.selected = order.first().copied();
        }
        if order.len() > 1 {
            self.overview = true;
        }
        self.order = order;
        self.quantities = quantities;
    }

    fn position(&self) -> Option<usize> {
        let s = self.selected?;
        self.order.iter().position(|&r| r == s)
    }

    fn step_run(&mut self, forward: bool) {
        let n = self.order.len();
        if n == 0 {
            return;
        }
        let i = self.position().unwrap_or(0);
        let j = if forward {
            (i + 1) % n
        } else {
            (i + n - 1) % n
        };
        if j != i {
            self.alert_scroll = 0;
        }
        self.selected = self.order.get(j).copied();
    }

    fn step_quantity(&mut self, forward: bool) {
        let Some(run) = self.selected else {
            return;
        };
        let n = self.quantities.len();
        if n == 0 {
            return;
        }
        let current = self
            .quantity
            .get(&run)
            .and_then(|q| self.quantities.iter().position(|x| x == q))
            .unwrap_or(0);
        let next = if forward {
            (current + 1).min(n - 1)
        } else {
            current.saturating_sub(1)
        };
        if let Some(name) = self.quantities.get(next) {
            self.quantity.insert(run, name.clone());
        }
    }

    fn pick_quantity(&mut self, number: u8) {
        let (Some(run), Some(name)) = (
            self.selected,
            self.quantities.get(usize::from(number).saturating_sub(1)),
        ) else {
            return;
        };
        self.quantity.insert(run, name.clone());
    }

    /// Handles a key; returns what the main loop must do.
    pub fn on_key(&mut self, key: &KeyEvent) -> Vec<Effect> {
        let Some(act) = action(key, self.screen) else {
            return Vec::new();
        };
        let had_message = self.message.take().is_some();
        if self.help && !matches!(act, Action::Quit | Action::Suspend | Action::Redraw) {
            // Any key closes the help; `?` and Esc only close it.
            self.help = false;
            if matches!(act, Action::Help | Action::Back) {
                return vec![Effect::Redraw];
            }
        }
        let mut effects = vec![Effect::Redraw];
        match act {
            Action::Quit => {
                self.quit = true;
                return vec![Effect::Quit];
            }
            Action::Help => self.help = true,
            Action::Back => {
                if self.screen == Screen::Detail && self.overview {
                    self.screen = Screen::Overview;
                    self.chart_only = false;
                } else if self.chart_only {
                    self.chart_only = false;
                } else if !had_message {
                    return Vec::new();
                }
            }
            Action::Open => {
                if self.selected.is_some() {
                    self.screen = Screen::Detail;
                    self.alert_scroll = 0;
                }
            }
            Action::Up | Action::Down => {
                let forward = act == Action::Down;
                match self.screen {
                    Screen::Overview => self.step_run(forward),
                    Screen::Detail => self.step_quantity(forward),
                }
            }
            Action::NextRun => self.step_run(true),
            Action::PreviousRun => self.step_run(false),
            Action::Pick(n) => self.pick_quantity(n),
            Action::View => self.view = self.view.next(),
            Action::ZoomIn => {
                self.view = ChartView::Window;
                self.window_rows = (self.window_rows / 2).max(MIN_WINDOW_ROWS);
            }
            Action::ZoomOut => {
                self.view = ChartView::Window;
                self.window_rows = (self.window_rows * 2).min(MAX_WINDOW_ROWS);
            }
            Action::ChartOnly => self.chart_only = !self.chart_only,
            Action::Pause => self.paused = !self.paused,
            Action::Report => {
                if let Some(run) = self.selected {
                    effects.push(Effect::WriteReport(run));
                }
            }
            Action::AlertsNewer => self.alert_scroll = self.alert_scroll.saturating_sub(5),
            Action::AlertsOlder => self.alert_scroll += 5,
            Action::Redraw => return vec![Effect::FullRedraw],
            Action::Suspend => return vec![Effect::Suspend],
        }
        effects
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crossterm::event::{KeyCode, KeyModifiers};

    fn press(app: &mut App, code: KeyCode) -> Vec<Effect> {
        app.on_key(&KeyEvent::new(code, KeyModifiers::NONE))
    }

    fn three_runs() -> App {
        let mut app = App::new(3, false);
        app.sync(
            vec![RunId(2), RunId(0), RunId(1)],
            vec!["potential".into(), "temperature".into()],
        );
        app
    }

    #[test]
    fn one_run_opens_its_detail_and_several_the_overview() {
        assert_eq!(App::new(1, false).screen, Screen::Detail);
        assert_eq!(App::new(3, false).screen, Screen::Overview);
        assert_eq!(App::new(0, true).screen, Screen::Overview);
        assert_eq!(App::new(1, true).screen, Screen::Overview);
    }

    #[test]
    fn the_overview_follows_the_order_drawn_and_opens_a_run_and_comes_back() {
        let mut app = three_runs();
        // The selection was run 0; the drawn order puts run 2 first.
        assert_eq!(app.selected, Some(RunId(0)));
        press(&mut app, KeyCode::Up);
        assert_eq!(app.selected, Some(RunId(2)));
        press(&mut app, KeyCode::Up);
        assert_eq!(app.selected, Some(RunId(1)), "wraps around");
        press(&mut app, KeyCode::Enter);
        assert_eq!(app.screen, Screen::Detail);
        press(&mut app, KeyCode::Tab);
        assert_eq!(app.selected, Some(RunId(2)));
        press(&mut app, KeyCode::BackTab);
        assert_eq!(app.selected, Some(RunId(1)));
        press(&mut app, KeyCode::Esc);
        assert_eq!(app.screen, Screen::Overview);
        assert_eq!(app.selected, Some(RunId(1)), "comes back to the same run");
    }

    #[test]
    fn quantities_views_and_zoom_change_the_chart() {
        let mut app = three_runs();
        press(&mut app, KeyCode::Enter);
        press(&mut app, KeyCode::Down);
        assert_eq!(
            app.quantity.get(&RunId(0)).map(String::as_str),
            Some("temperature")
        );
        press(&mut app, KeyCode::Down);
        assert_eq!(
            app.quantity.get(&RunId(0)).map(String::as_str),
            Some("temperature"),
            "stops at the last"
        );
        press(&mut app, KeyCode::Char('1'));
        assert_eq!(
            app.quantity.get(&RunId(0)).map(String::as_str),
            Some("potential")
        );
        press(&mut app, KeyCode::Char('9'));
        assert_eq!(
            app.quantity.get(&RunId(0)).map(String::as_str),
            Some("potential"),
            "no 9th"
        );
        assert_eq!(app.view, ChartView::All);
        press(&mut app, KeyCode::Char('v'));
        assert_eq!(app.view, ChartView::Production);
        press(&mut app, KeyCode::Char('+'));
        assert_eq!(
            (app.view, app.window_rows),
            (ChartView::Window, DEFAULT_WINDOW_ROWS / 2)
        );
        for _ in 0..20 {
            press(&mut app, KeyCode::Char('+'));
        }
        assert_eq!(app.window_rows, MIN_WINDOW_ROWS);
        press(&mut app, KeyCode::Char('z'));
        assert!(app.chart_only);
        press(&mut app, KeyCode::Esc);
        assert_eq!(app.screen, Screen::Overview);
        assert!(!app.chart_only);
    }

    #[test]
    fn help_pause_report_and_quit() {
        let mut app = three_runs();
        press(&mut app, KeyCode::Char('?'));
        assert!(app.help);
        // Any key closes the help; Esc does nothing else.
        press(&mut app, KeyCode::Esc);
        assert!(!app.help);
        assert_eq!(app.screen, Screen::Overview);
        press(&mut app, KeyCode::Char('p'));
        assert!(app.paused);
        press(&mut app, KeyCode::Char(' '));
        assert!(!app.paused);
        let fx = press(&mut app, KeyCode::Char('w'));
        assert!(fx.contains(&Effect::WriteReport(RunId(0))));
        assert_eq!(
            press(&mut app, KeyCode::Char('x')),
            Vec::<Effect>::new(),
            "unbound"
        );
        assert_eq!(press(&mut app, KeyCode::Char('q')), vec![Effect::Quit]);
        assert!(app.quit);
    }

    #[test]
    fn a_selected_run_that_disappears_gives_way_to_the_first() {
        let mut app = three_runs();
        app.selected = Some(RunId(7));
        app.sync(vec![RunId(1), RunId(0)], Vec::new());
        assert_eq!(app.selected, Some(RunId(1)));
    }

    #[test]
    fn a_single_run_has_no_overview_to_go_back_to() {
        let mut app = App::new(1, false);
        app.sync(vec![RunId(0)], vec!["a".into()]);
        assert_eq!(press(&mut app, KeyCode::Esc), Vec::<Effect>::new());
        assert_eq!(app.screen, Screen::Detail);
    }
}
