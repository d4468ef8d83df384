//! A terminal backend that sends as few bytes as it can, for slow links: ratatui hands it
//! only the cells that changed since the last frame, and it
//! - keeps the terminal's pen (colours, bold, reverse...) from one cell and one frame to
//!   the next, changing only what differs in one SGR sequence (no reset after each frame);
//! - moves the cursor forward on a row with `CSI n C` and elsewhere with `CSI row;col H`,
//!   and not at all between neighbouring cells;
//! - writes the 16 named colours as their own SGR codes (30–37, 90–97), which every
//!   16-colour terminal knows (the 256-colour form is used only for indexed colours);
//! - hides or shows the cursor only when that changes;
//! - wraps each frame in a synchronized update (DEC mode 2026: the terminal shows the
//!   frame whole, so slow links do not tear it) and sends it in one write, and sends
//!   nothing at all for a frame in which no cell changed.

use std::io::{self, Write};

use ratatui::backend::{Backend, ClearType, WindowSize};
use ratatui::buffer::Cell;
use ratatui::layout::{Position, Size};
use ratatui::style::{Color, Modifier};
use unicode_width::UnicodeWidthStr;

/// The terminal's current colours and attributes, as last set.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct Pen {
    fg: Color,
    bg: Color,
    modifier: Modifier,
}

const PLAIN: Pen = Pen {
    fg: Color::Reset,
    bg: Color::Reset,
    modifier: Modifier::empty(),
};

/// The lean backend over any writer (standard output in the dashboard).
#[derive(Debug)]
pub struct LeanBackend<W: Write> {
    out: W,
    /// The pen as last written; `None` when unknown (at start).
    pen: Option<Pen>,
    /// Where the terminal's cursor is, when known.
    cursor: Option<(u16, u16)>,
    cursor_hidden: Option<bool>,
    /// A fixed size instead of the terminal's (tests).
    fixed_size: Option<Size>,
    /// Frames are synchronized updates sent by [`LeanBackend::finish_frame`]
    /// (`Backend::flush` then waits for it).
    frames: bool,
    /// A synchronized update was begun and not ended yet.
    in_frame: bool,
    /// Glyphs are sent as ASCII stand-ins (a locale without UTF-8).
    ascii: bool,
}

impl<W: Write> LeanBackend<W> {
    /// A backend writing to `out`, asking the terminal for its size.
    pub fn new(out: W) -> LeanBackend<W> {
        LeanBackend {
            out,
            pen: None,
            cursor: None,
            cursor_hidden: None,
            fixed_size: None,
            frames: false,
            in_frame: false,
            ascii: false,
        }
    }

    /// Sends every glyph as its ASCII stand-in of the same width ([`super::glyphs::ascii`]).
    pub fn with_ascii(mut self, ascii: bool) -> LeanBackend<W> {
        self.ascii = ascii;
        self
    }

    /// Wraps each frame in a synchronized update, sent by [`LeanBackend::finish_frame`].
    pub fn with_synchronized_frames(mut self) -> LeanBackend<W> {
        self.frames = true;
        self
    }

    fn begin_frame(&mut self) -> io::Result<()> {
        if self.frames && !self.in_frame {
            self.in_frame = true;
            self.out.write_all(b"\x1b[?2026h")?;
        }
        Ok(())
    }

    /// Ends the frame's synchronized update (if anything was drawn) and sends it.
    pub fn finish_frame(&mut self) -> io::Result<()> {
        if self.in_frame {
            self.in_frame = false;
            self.out.write_all(b"\x1b[?2026l")?;
        }
        self.out.flush()
    }

    /// A backend of a fixed size (for tests without a terminal).
    pub fn with_size(out: W, width: u16, height: u16) -> LeanBackend<W> {
        LeanBackend {
            fixed_size: Some(Size::new(width, height)),
            ..LeanBackend::new(out)
        }
    }

    /// The writer.
    pub fn writer(&self) -> &W {
        &self.out
    }

    /// The writer, to write to it (synchronized-update markers).
    pub fn writer_mut(&mut self) -> &mut W {
        &mut self.out
    }

    fn move_to(&mut self, x: u16, y: u16) -> io::Result<()> {
        match self.cursor {
            Some((cx, cy)) if cy == y && cx == x => Ok(()),
            Some((cx, cy)) if cy == y && cx < x => {
                let n = x - cx;
                if n == 1 {
                    self.out.write_all(b"\x1b[C")
                } else {
                    write!(self.out, "\x1b[{n}C")
                }
            }
            _ => write!(self.out, "\x1b[{};{}H", y + 1, x + 1),
        }
    }

    fn set_pen(&mut self, want: Pen) -> io::Result<()> {
        let have = self.pen.unwrap_or(Pen {
            fg: Color::Indexed(255),
            bg: Color::Indexed(255),
            modifier: Modifier::all(),
        });
        if have == want {
            return Ok(());
        }
        let mut codes: Vec<String> = Vec::new();
        if self.pen.is_none() {
            codes.push("0".into());
        } else {
            modifier_changes(have.modifier, want.modifier, &mut codes);
        }
        let base = if self.pen.is_none() { PLAIN } else { have };
        if self.pen.is_none() {
            modifier_changes(Modifier::empty(), want.modifier, &mut codes);
        }
        if want.fg != base.fg || self.pen.is_none() && want.fg != Color::Reset {
            codes.push(color_code(want.fg, false));
        }
        if want.bg != base.bg || self.pen.is_none() && want.bg != Color::Reset {
            codes.push(color_code(want.bg, true));
        }
        self.pen = Some(want);
        if codes.is_empty() {
            return Ok(());
        }
        write!(self.out, "\x1b[{}m", codes.join(";"))
    }
}

/// SGR codes that turn `from`'s attributes into `to`'s.
fn modifier_changes(from: Modifier, to: Modifier, codes: &mut Vec<String>) {
    let off = from - to;
    let on = to - from;
    // Bold and dim share one "off" code: turning either off turns both off.
    let intensity_off = off.intersects(Modifier::BOLD | Modifier::DIM);
    if intensity_off {
        codes.push("22".into());
    }
    let pairs: [(Modifier, &str, &str); 7] = [
        (Modifier::ITALIC, "3", "23"),
        (Modifier::UNDERLINED, "4", "24"),
        (Modifier::SLOW_BLINK, "5", "25"),
        (Modifier::RAPID_BLINK, "6", "25"),
        (Modifier::REVERSED, "7", "27"),
        (Modifier::HIDDEN, "8", "28"),
        (Modifier::CROSSED_OUT, "9", "29"),
    ];
    for (m, _, code_off) in pairs {
        if off.contains(m) {
            codes.push(code_off.into());
        }
    }
    let bold_again = intensity_off && to.contains(Modifier::BOLD);
    let dim_again = intensity_off && to.contains(Modifier::DIM);
    if on.contains(Modifier::BOLD) || bold_again {
        codes.push("1".into());
    }
    if on.contains(Modifier::DIM) || dim_again {
        codes.push("2".into());
    }
    for (m, code_on, _) in pairs {
        if on.contains(m) {
            codes.push(code_on.into());
        }
    }
}

/// The SGR code of a colour (foreground, or background when `bg`).
fn color_code(c: Color, bg: bool) -> String {
    let base = |n: u8| -> String {
        let n = if bg { n + 10 } else { n };
        n.to_string()
    };
    match c {
        Color::Reset => base(39),
        Color::Black => base(30),
        Color::Red => base(31),
        Color::Green => base(32),
        Color::Yellow => base(33),
        Color::Blue => base(34),
        Color::Magenta => base(35),
        Color::Cyan => base(36),
        Color::Gray => base(37),
        Color::DarkGray => base(90),
        Color::LightRed => base(91),
        Color::LightGreen => base(92),
        Color::LightYellow => base(93),
        Color::LightBlue => base(94),
        Color::LightMagenta => base(95),
        Color::LightCyan => base(96),
        Color::White => base(97),
        Color::Indexed(i) => format!("{};5;{i}", if bg { 48 } else { 38 }),
        Color::Rgb(r, g, b) => format!("{};2;{r};{g};{b}", if bg { 48 } else { 38 }),
    }
}

impl<W: Write> Backend for LeanBackend<W> {
    type Error = io::Error;

    fn draw<'a, I>(&mut self, content: I) -> io::Result<()>
    where
        I: Iterator<Item = (u16, u16, &'a Cell)>,
    {
        for (x, y, cell) in content {
            self.begin_frame()?;
            self.move_to(x, y)?;
            self.set_pen(Pen {
                fg: cell.fg,
                bg: cell.bg,
                modifier: cell.modifier,
            })?;
            let symbol = cell.symbol();
            if self.ascii {
                self.out
                    .write_all(super::glyphs::ascii(symbol).as_bytes())?;
            } else {
                self.out.write_all(symbol.as_bytes())?;
            }
            let width = symbol.width().max(1) as u16;
            self.cursor = Some((x.saturating_add(width), y));
        }
        Ok(())
    }

    fn hide_cursor(&mut self) -> io::Result<()> {
        if self.cursor_hidden != Some(true) {
            self.begin_frame()?;
            self.out.write_all(b"\x1b[?25l")?;
            self.cursor_hidden = Some(true);
        }
        Ok(())
    }

    fn show_cursor(&mut self) -> io::Result<()> {
        if self.cursor_hidden != Some(false) {
            self.begin_frame()?;
            self.out.write_all(b"\x1b[?25h")?;
            self.cursor_hidden = Some(false);
        }
        Ok(())
    }

    fn get_cursor_position(&mut self) -> io::Result<Position> {
        let (x, y) = self.cursor.unwrap_or((0, 0));
        Ok(Position::new(x, y))
    }

    fn set_cursor_position<P: Into<Position>>(&mut self, position: P) -> io::Result<()> {
        let p = position.into();
        write!(self.out, "\x1b[{};{}H", p.y + 1, p.x + 1)?;
        self.cursor = Some((p.x, p.y));
        Ok(())
    }

    fn clear(&mut self) -> io::Result<()> {
        self.clear_region(ClearType::All)
    }

    fn clear_region(&mut self, clear_type: ClearType) -> io::Result<()> {
        // Erasing paints with the pen's background: erase with a plain pen.
        self.out.write_all(b"\x1b[0m")?;
        self.pen = Some(PLAIN);
        if clear_type == ClearType::All {
            // A full clear follows a resize or a return from Ctrl-Z: where the cursor is
            // and whether it shows are not known any more.
            self.cursor = None;
            self.cursor_hidden = None;
        }
        let seq: &[u8] = match clear_type {
            ClearType::All => b"\x1b[2J",
            ClearType::AfterCursor => b"\x1b[J",
            ClearType::BeforeCursor => b"\x1b[1J",
            ClearType::CurrentLine => b"\x1b[2K",
            ClearType::UntilNewLine => b"\x1b[K",
        };
        self.out.write_all(seq)
    }

    fn size(&self) -> io::Result<Size> {
        match self.fixed_size {
            Some(s) => Ok(s),
            None => crossterm::terminal::size().map(|(w, h)| Size::new(w, h)),
        }
    }

    fn window_size(&mut self) -> io::Result<WindowSize> {
        let columns_rows = self.size()?;
        let pixels = match self.fixed_size {
            Some(_) => Size::new(0, 0),
            None => crossterm::terminal::window_size()
                .map(|w| Size::new(w.width, w.height))
                .unwrap_or(Size::new(0, 0)),
        };
        Ok(WindowSize {
            columns_rows,
            pixels,
        })
    }

    fn flush(&mut self) -> io::Result<()> {
        if self.frames {
            Ok(())
        } else {
            self.out.flush()
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ratatui::style::Style;
    use ratatui::text::Line;
    use ratatui::widgets::Widget;
    use ratatui::Terminal;

    fn frame(term: &mut Terminal<LeanBackend<Vec<u8>>>, lines: &[(&str, Style)]) -> Vec<u8> {
        term.backend_mut().writer_mut().clear();
        term.draw(|f| {
            for (i, (text, style)) in lines.iter().enumerate() {
                let area = f.area();
                Line::styled(*text, *style).render(
                    ratatui::layout::Rect::new(0, i as u16, area.width, 1),
                    f.buffer_mut(),
                );
            }
        })
        .unwrap();
        term.backend().writer().clone()
    }

    #[test]
    fn frames_drawn_through_it_look_the_same_in_a_terminal() {
        let mut term = Terminal::new(LeanBackend::with_size(Vec::new(), 20, 3)).unwrap();
        let mut screen = vt100::Parser::new(3, 20, 0);
        let bold_red = Style::new().fg(Color::Red).add_modifier(Modifier::BOLD);
        let rev = Style::new().add_modifier(Modifier::REVERSED);
        let frames: [&[(&str, Style)]; 3] = [
            &[
                ("rows 1999", Style::new()),
                ("✗ CRIT runaway", bold_red),
                ("ok", rev),
            ],
            &[
                ("rows 2000", Style::new()),
                ("✗ CRIT runaway", bold_red),
                ("ok", Style::new()),
            ],
            &[
                ("rows 2001 ▁▂█", Style::new().fg(Color::Cyan)),
                ("", Style::new()),
                ("ok", rev),
            ],
        ];
        for lines in frames {
            let bytes = frame(&mut term, lines);
            screen.process(&bytes);
            let s = screen.screen();
            for (row, (text, style)) in lines.iter().enumerate() {
                assert_eq!(
                    s.contents_between(row as u16, 0, row as u16, 20).trim_end(),
                    *text
                );
                if let Some(c) = s.cell(row as u16, 0).filter(|_| !text.is_empty()) {
                    assert_eq!(
                        c.bold(),
                        style.add_modifier.contains(Modifier::BOLD),
                        "{row}"
                    );
                    assert_eq!(c.inverse(), style.add_modifier.contains(Modifier::REVERSED));
                    let want = match style.fg {
                        Some(Color::Red) => vt100::Color::Idx(1),
                        Some(Color::Cyan) => vt100::Color::Idx(6),
                        _ => vt100::Color::Default,
                    };
                    assert_eq!(c.fgcolor(), want, "row {row}");
                }
            }
        }
    }

    #[test]
    fn in_ascii_mode_the_screen_holds_only_ascii_in_the_same_places() {
        let backend = LeanBackend::with_size(Vec::new(), 20, 2).with_ascii(true);
        let mut term = Terminal::new(backend).unwrap();
        let bytes = frame(
            &mut term,
            &[("│ rows ▁▂█ ✓", Style::new()), ("✗ x ⡠⠊ 12", Style::new())],
        );
        assert!(bytes.is_ascii());
        let mut screen = vt100::Parser::new(2, 20, 0);
        screen.process(&bytes);
        let s = screen.screen();
        assert_eq!(s.contents_between(0, 0, 0, 20).trim_end(), "| rows _.# v");
        assert_eq!(s.contents_between(1, 0, 1, 20).trim_end(), "x x ** 12");
    }

    #[test]
    fn a_changed_digit_costs_a_move_and_the_digit() {
        let mut term = Terminal::new(LeanBackend::with_size(Vec::new(), 20, 2)).unwrap();
        frame(
            &mut term,
            &[("rows 1999", Style::new()), ("x", Style::new())],
        );
        let bytes = frame(
            &mut term,
            &[("rows 2000", Style::new()), ("x", Style::new())],
        );
        // The cursor is after "x" on the second row: one absolute move, then the digits
        // in one run; no colour reset, and the cursor is not hidden again.
        assert_eq!(String::from_utf8(bytes).unwrap(), "\x1b[1;6H2000");
    }

    #[test]
    fn a_frame_is_one_synchronized_update_and_an_unchanged_frame_sends_nothing() {
        let mut term =
            Terminal::new(LeanBackend::with_size(Vec::new(), 10, 1).with_synchronized_frames())
                .unwrap();
        let draw = |term: &mut Terminal<LeanBackend<Vec<u8>>>, text: &str| {
            term.backend_mut().writer_mut().clear();
            term.draw(|f| Line::raw(text).render(f.area(), f.buffer_mut()))
                .unwrap();
            term.backend_mut().finish_frame().unwrap();
            String::from_utf8(term.backend().writer().clone()).unwrap()
        };
        let first = draw(&mut term, "a");
        assert!(
            first.starts_with("\x1b[?2026h") && first.ends_with("\x1b[?2026l"),
            "{first:?}"
        );
        assert_eq!(draw(&mut term, "a"), "");
        assert_eq!(draw(&mut term, "b"), "\x1b[?2026h\x1b[1;1Hb\x1b[?2026l");
    }

    #[test]
    fn sixteen_colours_use_their_own_codes() {
        assert_eq!(color_code(Color::Cyan, false), "36");
        assert_eq!(color_code(Color::DarkGray, false), "90");
        assert_eq!(color_code(Color::Red, true), "41");
        assert_eq!(color_code(Color::Indexed(200), false), "38;5;200");
        let mut codes = Vec::new();
        modifier_changes(
            Modifier::BOLD | Modifier::REVERSED,
            Modifier::DIM,
            &mut codes,
        );
        assert_eq!(codes, vec!["22", "27", "2"]);
    }
}
