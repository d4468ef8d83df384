//! Every style the dashboard uses, and the symbols that carry meaning without colour.
//!
//! Colours are only the 16 named terminal colours (so 16-colour terminals and their
//! themes work); with `NO_COLOR` set (<https://no-color.org>) no colour is sent at all and
//! the same meaning is carried by symbols, words, bold and reverse video. Nothing else in
//! the dashboard decides a style.

use ratatui::style::{Color, Modifier, Style};

use crate::alert::Severity;

use super::model::Condition;

/// The dashboard's styles.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Theme {
    color: bool,
}

impl Theme {
    /// Colours unless `NO_COLOR` is set to a non-empty value.
    pub fn from_env() -> Theme {
        let no_color = std::env::var_os("NO_COLOR").is_some_and(|v| !v.is_empty());
        Theme { color: !no_color }
    }

    /// With the 16 named colours.
    pub fn colored() -> Theme {
        Theme { color: true }
    }

    /// Without any colour (`NO_COLOR`).
    pub fn plain() -> Theme {
        Theme { color: false }
    }

    /// Whether colours are used.
    pub fn has_color(&self) -> bool {
        self.color
    }

    fn fg(&self, c: Color) -> Style {
        if self.color {
            Style::new().fg(c)
        } else {
            Style::new()
        }
    }

    /// The status word of a run. Bad states are bold (and reversed when critical), so
    /// they stand out without colour too.
    pub fn condition(&self, c: Condition) -> Style {
        match c {
            Condition::Unstable => self
                .fg(Color::Red)
                .add_modifier(Modifier::BOLD | Modifier::REVERSED),
            Condition::Stalled => self.fg(Color::Magenta).add_modifier(Modifier::BOLD),
            Condition::Drifting => self.fg(Color::Yellow).add_modifier(Modifier::BOLD),
            Condition::Settling => self.fg(Color::Cyan),
            Condition::Steady => self.fg(Color::Green),
            Condition::Finished => self.fg(Color::Blue),
            Condition::Loading | Condition::Starting => Style::new(),
            Condition::Waiting | Condition::Gone => self.fg(Color::Magenta),
        }
    }

    /// An alert's severity marker.
    pub fn severity(&self, s: Severity) -> Style {
        match s {
            Severity::Critical => self
                .fg(Color::Red)
                .add_modifier(Modifier::BOLD | Modifier::REVERSED),
            Severity::Warning => self.fg(Color::Yellow).add_modifier(Modifier::BOLD),
            Severity::Info => self.fg(Color::Cyan),
        }
    }

    /// An alert line's text: full for active alerts, dim once cleared.
    pub fn alert_text(&self, active: bool) -> Style {
        if active {
            Style::new()
        } else {
            Style::new().add_modifier(Modifier::DIM)
        }
    }

    /// Panel titles and section names.
    pub fn title(&self) -> Style {
        Style::new().add_modifier(Modifier::BOLD)
    }

    /// Labels before values (summary keys, axis text).
    pub fn label(&self) -> Style {
        self.fg(Color::Gray)
    }

    /// Quiet text: hints, units, things that are not news.
    pub fn dim(&self) -> Style {
        Style::new().add_modifier(Modifier::DIM)
    }

    /// A value worth reading.
    pub fn value(&self) -> Style {
        Style::new().add_modifier(Modifier::BOLD)
    }

    /// Chart data from the onset on (production).
    pub fn data(&self) -> Style {
        self.fg(Color::Cyan)
    }

    /// Chart data before the onset (the part to discard).
    pub fn data_early(&self) -> Style {
        self.fg(Color::DarkGray)
    }

    /// The onset marker.
    pub fn onset(&self) -> Style {
        self.fg(Color::Green).add_modifier(Modifier::BOLD)
    }

    /// The production mean line and its label.
    pub fn mean(&self) -> Style {
        self.fg(Color::Yellow)
    }

    /// Non-finite values on a chart.
    pub fn nonfinite(&self) -> Style {
        self.fg(Color::Red).add_modifier(Modifier::BOLD)
    }

    /// The selected line of a list.
    pub fn selected(&self) -> Style {
        Style::new().add_modifier(Modifier::REVERSED)
    }

    /// A key name in hints and help.
    pub fn key(&self) -> Style {
        self.fg(Color::Cyan).add_modifier(Modifier::BOLD)
    }

    /// A message after an action (report written, or why not).
    pub fn message(&self, ok: bool) -> Style {
        if ok {
            self.fg(Color::Green).add_modifier(Modifier::BOLD)
        } else {
            self.fg(Color::Red).add_modifier(Modifier::BOLD)
        }
    }
}

/// The marker of a severity: a symbol and a word, readable without colour.
pub fn severity_marker(s: Severity) -> &'static str {
    match s {
        Severity::Critical => "✗ CRIT",
        Severity::Warning => "▲ WARN",
        Severity::Info => "· info",
    }
}
