//! Keys: one table maps keys to actions per screen, and the help screen is drawn from the
//! same table, so what `?` shows is what the keys do.

use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};

use super::app::Screen;

/// What a key asks for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Action {
    Quit,
    Help,
    /// Back to the overview (or close the help).
    Back,
    /// Open the selected run.
    Open,
    Up,
    Down,
    NextRun,
    PreviousRun,
    /// Chart a quantity by its number (1-based).
    Pick(u8),
    /// Next chart view: all rows, production, latest window.
    View,
    /// Narrower latest window.
    ZoomIn,
    /// Wider latest window.
    ZoomOut,
    /// The chart alone on the screen, or back.
    ChartOnly,
    Pause,
    Report,
    AlertsNewer,
    AlertsOlder,
    Redraw,
    Suspend,
}

/// Where a binding applies.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Scope {
    Everywhere,
    Overview,
    Detail,
}

impl Scope {
    fn includes(self, screen: Screen) -> bool {
        match self {
            Scope::Everywhere => true,
            Scope::Overview => screen == Screen::Overview,
            Scope::Detail => screen == Screen::Detail,
        }
    }
}

/// One line of the key table.
#[derive(Debug, Clone, Copy)]
pub struct Binding {
    /// Keys, each a code and the modifiers it needs (Shift is ignored for characters).
    pub keys: &'static [(KeyCode, KeyModifiers)],
    /// The keys as shown in the help.
    pub shown: &'static str,
    pub action: Action,
    pub scope: Scope,
    /// What it does, for the help; empty when the line before in the table says it.
    pub help: &'static str,
}

const NONE: KeyModifiers = KeyModifiers::NONE;
const CTRL: KeyModifiers = KeyModifiers::CONTROL;

/// Every binding, in the order the help lists them.
pub const BINDINGS: &[Binding] = &[
    Binding {
        keys: &[(KeyCode::Up, NONE), (KeyCode::Char('k'), NONE)],
        shown: "↑↓ k j",
        action: Action::Up,
        scope: Scope::Everywhere,
        help: "previous / next: run (all runs), quantity (one run)",
    },
    Binding {
        keys: &[(KeyCode::Down, NONE), (KeyCode::Char('j'), NONE)],
        shown: "↓ j",
        action: Action::Down,
        scope: Scope::Everywhere,
        help: "",
    },
    Binding {
        keys: &[
            (KeyCode::Enter, NONE),
            (KeyCode::Right, NONE),
            (KeyCode::Char('l'), NONE),
        ],
        shown: "Enter →",
        action: Action::Open,
        scope: Scope::Overview,
        help: "open the selected run",
    },
    Binding {
        keys: &[
            (KeyCode::Esc, NONE),
            (KeyCode::Backspace, NONE),
            (KeyCode::Left, NONE),
        ],
        shown: "Esc ←",
        action: Action::Back,
        scope: Scope::Everywhere,
        help: "back to the overview of all runs; close this help",
    },
    Binding {
        keys: &[(KeyCode::Tab, NONE), (KeyCode::Char(']'), NONE)],
        shown: "Tab S-Tab",
        action: Action::NextRun,
        scope: Scope::Detail,
        help: "next / previous run, in the overview's order (also ] [)",
    },
    Binding {
        keys: &[(KeyCode::BackTab, NONE), (KeyCode::Char('['), NONE)],
        shown: "S-Tab [",
        action: Action::PreviousRun,
        scope: Scope::Detail,
        help: "",
    },
    Binding {
        keys: &[
            (KeyCode::Char('1'), NONE),
            (KeyCode::Char('2'), NONE),
            (KeyCode::Char('3'), NONE),
            (KeyCode::Char('4'), NONE),
            (KeyCode::Char('5'), NONE),
            (KeyCode::Char('6'), NONE),
            (KeyCode::Char('7'), NONE),
            (KeyCode::Char('8'), NONE),
            (KeyCode::Char('9'), NONE),
        ],
        shown: "1-9",
        action: Action::Pick(0),
        scope: Scope::Detail,
        help: "chart quantity number N",
    },
    Binding {
        keys: &[(KeyCode::Char('v'), NONE)],
        shown: "v",
        action: Action::View,
        scope: Scope::Detail,
        help: "chart view: all rows, production (from the onset), latest window",
    },
    Binding {
        keys: &[(KeyCode::Char('+'), NONE), (KeyCode::Char('='), NONE)],
        shown: "+ -",
        action: Action::ZoomIn,
        scope: Scope::Detail,
        help: "zoom in / out: a narrower / wider latest window",
    },
    Binding {
        keys: &[(KeyCode::Char('-'), NONE), (KeyCode::Char('_'), NONE)],
        shown: "-",
        action: Action::ZoomOut,
        scope: Scope::Detail,
        help: "",
    },
    Binding {
        keys: &[(KeyCode::Char('z'), NONE)],
        shown: "z",
        action: Action::ChartOnly,
        scope: Scope::Detail,
        help: "the chart alone on the screen, or everything again",
    },
    Binding {
        keys: &[(KeyCode::PageUp, NONE), (KeyCode::Char('K'), NONE)],
        shown: "PgUp PgDn",
        action: Action::AlertsNewer,
        scope: Scope::Detail,
        help: "alerts: newer / older",
    },
    Binding {
        keys: &[(KeyCode::PageDown, NONE), (KeyCode::Char('J'), NONE)],
        shown: "PgDn",
        action: Action::AlertsOlder,
        scope: Scope::Detail,
        help: "",
    },
    Binding {
        keys: &[(KeyCode::Char('p'), NONE), (KeyCode::Char(' '), NONE)],
        shown: "p Space",
        action: Action::Pause,
        scope: Scope::Everywhere,
        help: "pause the screen (rows are still read); again to resume",
    },
    Binding {
        keys: &[(KeyCode::Char('w'), NONE)],
        shown: "w",
        action: Action::Report,
        scope: Scope::Everywhere,
        help: "write the selected run's report to a text file",
    },
    Binding {
        keys: &[(KeyCode::Char('?'), NONE), (KeyCode::F(1), NONE)],
        shown: "?",
        action: Action::Help,
        scope: Scope::Everywhere,
        help: "this help",
    },
    Binding {
        keys: &[(KeyCode::Char('l'), CTRL)],
        shown: "Ctrl-L",
        action: Action::Redraw,
        scope: Scope::Everywhere,
        help: "redraw the whole screen",
    },
    Binding {
        keys: &[(KeyCode::Char('z'), CTRL)],
        shown: "Ctrl-Z",
        action: Action::Suspend,
        scope: Scope::Everywhere,
        help: "suspend (back with `fg`)",
    },
    Binding {
        keys: &[(KeyCode::Char('q'), NONE), (KeyCode::Char('c'), CTRL)],
        shown: "q Ctrl-C",
        action: Action::Quit,
        scope: Scope::Everywhere,
        help: "quit",
    },
];

fn matches(key: &KeyEvent, code: KeyCode, mods: KeyModifiers) -> bool {
    let pressed = key.modifiers - KeyModifiers::SHIFT;
    key.code == code && pressed == mods
}

/// The action of a key on a screen, if any.
pub fn action(key: &KeyEvent, screen: Screen) -> Option<Action> {
    BINDINGS
        .iter()
        .filter(|b| b.scope.includes(screen))
        .find_map(|b| {
            b.keys
                .iter()
                .find(|(code, mods)| matches(key, *code, *mods))
                .map(|_| match (b.action, key.code) {
                    (Action::Pick(_), KeyCode::Char(c)) => {
                        Action::Pick(c.to_digit(10).unwrap_or(1) as u8)
                    }
                    (a, _) => a,
                })
        })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn key(code: KeyCode) -> KeyEvent {
        KeyEvent::new(code, KeyModifiers::NONE)
    }

    #[test]
    fn keys_map_to_actions_per_screen() {
        assert_eq!(
            action(&key(KeyCode::Char('q')), Screen::Detail),
            Some(Action::Quit)
        );
        assert_eq!(
            action(
                &KeyEvent::new(KeyCode::Char('c'), KeyModifiers::CONTROL),
                Screen::Overview
            ),
            Some(Action::Quit)
        );
        assert_eq!(
            action(&key(KeyCode::Enter), Screen::Overview),
            Some(Action::Open)
        );
        assert_eq!(action(&key(KeyCode::Enter), Screen::Detail), None);
        assert_eq!(
            action(&key(KeyCode::Char('3')), Screen::Detail),
            Some(Action::Pick(3))
        );
        assert_eq!(action(&key(KeyCode::Char('v')), Screen::Overview), None);
        // Shift is part of the character, not a modifier to match.
        assert_eq!(
            action(
                &KeyEvent::new(KeyCode::Char('?'), KeyModifiers::SHIFT),
                Screen::Detail
            ),
            Some(Action::Help)
        );
        // `z` and Ctrl-Z differ.
        assert_eq!(
            action(&key(KeyCode::Char('z')), Screen::Detail),
            Some(Action::ChartOnly)
        );
        assert_eq!(
            action(
                &KeyEvent::new(KeyCode::Char('z'), KeyModifiers::CONTROL),
                Screen::Detail
            ),
            Some(Action::Suspend)
        );
    }

    #[test]
    fn no_key_is_bound_twice_on_one_screen() {
        for screen in [Screen::Overview, Screen::Detail] {
            let mut seen = Vec::new();
            for b in BINDINGS.iter().filter(|b| b.scope.includes(screen)) {
                for k in b.keys {
                    assert!(!seen.contains(k), "{k:?} bound twice on {screen:?}");
                    seen.push(*k);
                }
            }
        }
    }
}
