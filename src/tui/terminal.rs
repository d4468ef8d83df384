//! The terminal's modes: raw input, the alternate screen and a hidden cursor while the
//! dashboard runs, and restored exactly once whatever ends it: quitting, an error returned
//! with `?` (the guard's `Drop`), a panic (the hook), a signal (the main loop ends and the
//! guard drops), Ctrl-Z (restored before stopping, set again on `fg`).

use std::io::{self, Write};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Once;

use crossterm::cursor::{Hide, Show};
use crossterm::queue;
use crossterm::style::ResetColor;
use crossterm::terminal::{
    disable_raw_mode, enable_raw_mode, Clear, ClearType, EndSynchronizedUpdate,
    EnterAlternateScreen, LeaveAlternateScreen,
};

/// Whether the dashboard's modes are set (restore only then, and only once).
static ACTIVE: AtomicBool = AtomicBool::new(false);
static HOOK: Once = Once::new();

/// Writes what enters the dashboard's screen: the alternate screen, cleared, no cursor.
pub fn write_enter(out: &mut impl Write) -> io::Result<()> {
    queue!(out, EnterAlternateScreen, Clear(ClearType::All), Hide)?;
    out.flush()
}

/// Writes what gives the terminal back: ends a synchronized update left open, leaves the
/// alternate screen (the shell's screen comes back as it was), shows the cursor, resets
/// colours.
pub fn write_restore(out: &mut impl Write) -> io::Result<()> {
    queue!(
        out,
        EndSynchronizedUpdate,
        ResetColor,
        LeaveAlternateScreen,
        Show
    )?;
    out.flush()
}

/// Restores the terminal if the dashboard's modes are set; does nothing the second time.
pub fn restore() {
    if ACTIVE.swap(false, Ordering::SeqCst) {
        let _ = write_restore(&mut io::stdout());
        let _ = disable_raw_mode();
    }
}

/// Sets the dashboard's modes again (after Ctrl-Z and `fg`).
pub fn reenter() -> io::Result<()> {
    enable_raw_mode()?;
    ACTIVE.store(true, Ordering::SeqCst);
    write_enter(&mut io::stdout())
}

fn install_panic_hook() {
    HOOK.call_once(|| {
        let previous = std::panic::take_hook();
        std::panic::set_hook(Box::new(move |info| {
            // The message must land on the normal screen, in cooked mode.
            restore();
            previous(info);
        }));
    });
}

/// Holds the dashboard's terminal modes; restores them when dropped.
#[derive(Debug)]
pub struct TerminalGuard(());

impl TerminalGuard {
    /// Raw mode, alternate screen, hidden cursor; the panic hook restores them.
    pub fn enter() -> io::Result<TerminalGuard> {
        install_panic_hook();
        enable_raw_mode()?;
        ACTIVE.store(true, Ordering::SeqCst);
        let guard = TerminalGuard(());
        write_enter(&mut io::stdout())?;
        Ok(guard)
    }

    /// Leaves the modes for a stop (Ctrl-Z) and sets them again once continued.
    pub fn suspend(&self) -> io::Result<()> {
        restore();
        // SAFETY: raising a signal in our own process. SIGSTOP, not SIGTSTP: SIGTSTP is
        // caught (to come here when it is sent from outside), and the kernel drops its
        // default stop in an orphaned process group; SIGSTOP always stops until SIGCONT.
        unsafe {
            libc::raise(libc::SIGSTOP);
        }
        reenter()
    }
}

impl Drop for TerminalGuard {
    fn drop(&mut self) {
        restore();
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn restoring_leaves_the_alternate_screen_and_shows_the_cursor() {
        let mut out = Vec::new();
        write_enter(&mut out).unwrap();
        let enter = String::from_utf8(out.clone()).unwrap();
        assert!(enter.contains("\x1b[?1049h"), "alternate screen: {enter:?}");
        assert!(enter.contains("\x1b[?25l"), "cursor hidden: {enter:?}");
        out.clear();
        write_restore(&mut out).unwrap();
        let restore = String::from_utf8(out).unwrap();
        assert!(
            restore.contains("\x1b[?2026l"),
            "synchronized update ended: {restore:?}"
        );
        assert!(
            restore.contains("\x1b[?1049l"),
            "alternate screen left: {restore:?}"
        );
        assert!(restore.contains("\x1b[?25h"), "cursor shown: {restore:?}");
    }

    #[test]
    fn restore_without_modes_set_does_nothing() {
        // Not active: no write to the test's standard output, no mode change.
        restore();
        restore();
    }
}
