//! The layout generator: invented logs in every layout the reader claims to read, each with
//! its planted truth (rows, values, roles), read with no option given.
//!
//! A case draws a column set (roles, names in the trade's spellings and cases, units in
//! brackets, glued on, behind a slash or on a units line, counters named or left for the
//! data to tell), a delimiter (runs of whitespace or a single character), decorations (rule
//! lines, a separator at both ends of each row), a preamble of `key = value` lines, where
//! the header sits (plain, behind a comment prefix, behind the row tag, behind a label word,
//! reprinted every N rows), number formats, line endings (LF, CRLF, CR, mixed), a row tag
//! (a word or punctuation glued to the numbers), free text between rows, a byte-order mark
//! and Latin-1 bytes; or rows that carry their own names (`name=value` pairs, JSON objects).
//! It writes the text and checks that the reader finds every row, with every value in
//! canonical units and every column with its role, exactly as the layout was chosen to mean.
//! The expected canonical values come from the generator's own unit table (factors from
//! SI 2019 / CODATA 2018 definitions: 1 atm = 1.01325 bar, 1 kcal = 4.184 kJ, 1 eV per
//! particle = 96.485 332 12 kJ/mol, 1 Å³ = 10⁻³ nm³, 1 g/cm³ = 1000 kg/m³; 0 °C = 273.15 K).

use plateau::mapping::Role;
use plateau::parse::{parse_bytes_guessing, ParseOptions};
use proptest::prelude::*;

/// A unit as the generator writes it: spellings (bracketed / glued), and the factor and
/// offset to the canonical unit (exact by definition, see the module docs).
#[derive(Debug, Clone, Copy)]
struct U {
    text: &'static str,
    glued: &'static str,
    latin1: bool,
    scale: f64,
    offset: f64,
}

const fn u(text: &'static str, glued: &'static str, scale: f64, offset: f64) -> U {
    U {
        text,
        glued,
        latin1: false,
        scale,
        offset,
    }
}

fn units_of(role: Role) -> Vec<U> {
    match role {
        Role::Temperature => vec![
            u("K", "K", 1.0, 0.0),
            U {
                text: "\u{b0}C",
                glued: "C",
                latin1: true,
                scale: 1.0,
                offset: 273.15,
            },
        ],
        Role::Pressure => vec![
            u("bar", "bar", 1.0, 0.0),
            u("atm", "atm", 1.01325, 0.0),
            u("kPa", "kPa", 0.01, 0.0),
        ],
        Role::Potential | Role::Kinetic | Role::Total | Role::Conserved => vec![
            u("kJ/mol", "kJmol", 1.0, 0.0),
            u("kJ/mol", "kJ_mol", 1.0, 0.0),
            u("kJ/mol", "kJ_per_mol", 1.0, 0.0),
            u("kcal/mol", "kcal_mol", 4.184, 0.0),
            u("eV", "eV", 96.485_332_12, 0.0),
        ],
        Role::Volume => vec![u("nm^3", "nm3", 1.0, 0.0), u("A^3", "A3", 1e-3, 0.0)],
        Role::Density => vec![
            u("kg/m^3", "kg_m3", 1.0, 0.0),
            u("g/cm^3", "g_cm3", 1000.0, 0.0),
        ],
        Role::Time => vec![u("ps", "ps", 1.0, 0.0), u("fs", "fs", 1e-3, 0.0)],
        Role::Step => vec![],
    }
}

/// Names practitioners write (common practice, no source). `true`: holds a space.
fn names_of(role: Role) -> &'static [&'static str] {
    match role {
        Role::Potential => &[
            "pot",
            "Epot",
            "PotE",
            "E_pot",
            "potential energy",
            "PE",
            "Potential",
        ],
        Role::Kinetic => &["kin", "Ekin", "KE", "E_kin", "kinetic energy", "KinE"],
        Role::Total => &["tot", "Etot", "TotE", "E_total", "total energy", "Total"],
        Role::Conserved => &["cons", "Econs", "conserved", "E_cons", "Conserved"],
        Role::Temperature => &["T", "temp", "Temperature", "Temp"],
        Role::Pressure => &["P", "press", "Pressure", "pres"],
        Role::Volume => &["V", "vol", "Volume", "box volume"],
        Role::Density => &["rho", "dens", "Density"],
        Role::Time => &["t", "time", "Time", "simtime", "tau"],
        Role::Step => &["step", "nstep", "iter", "Step", "istep", "idx", "n"],
    }
}

/// Names the vocabulary does not know: only the data can tell these counters.
const DATA_ONLY: [&str; 3] = ["tau", "idx", "n"];

#[derive(Debug, Clone, Copy, PartialEq)]
enum UnitStyle {
    None,
    Paren,
    ParenGlued,
    Bracket,
    Glued,
    Slash,
    Line,
}

#[derive(Debug, Clone)]
struct Col {
    role: Role,
    name: String,
    unit: Option<U>,
    style: UnitStyle,
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum HeaderAt {
    Plain,
    Comment,
    Tag,
    Label,
}

#[derive(Debug, Clone)]
struct Layout {
    cols: Vec<Col>,
    delim: Option<char>,
    gap: &'static str,
    outer: bool,
    rules: bool,
    preamble: Vec<(String, String, char)>,
    header_at: HeaderAt,
    units_line: bool,
    repeat: Option<usize>,
    ending: &'static str,
    mixed_endings: bool,
    tag: Option<&'static str>,
    free_text: bool,
    bom: bool,
    number_style: u8,
    quoted: bool,
    records: Option<bool>,
    rows: usize,
    seed: u64,
}

/// A small deterministic generator for the values (the layout is drawn by proptest).
struct Rng(u64);
impl Rng {
    fn next(&mut self) -> f64 {
        self.0 = self
            .0
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        ((self.0 >> 11) as f64) / ((1u64 << 53) as f64)
    }
}

fn col_strategy(role: Role, space_ok: bool) -> impl Strategy<Value = Col> {
    let names: Vec<&'static str> = names_of(role)
        .iter()
        .copied()
        .filter(|n| space_ok || !n.contains(' '))
        .collect();
    let units = units_of(role);
    let n_units = units.len();
    (
        prop::sample::select(names),
        0..n_units.max(1),
        prop::sample::select(vec![
            UnitStyle::None,
            UnitStyle::Paren,
            UnitStyle::ParenGlued,
            UnitStyle::Bracket,
            UnitStyle::Glued,
            UnitStyle::Slash,
            UnitStyle::Line,
        ]),
        0..3u8,
    )
        .prop_map(move |(name, ui, style, case)| {
            let unit = units.get(ui).copied();
            let mut name = name.to_string();
            // Case does not matter, except for single letters (T is temperature, t time).
            if name.len() > 2 {
                name = match case {
                    0 => name,
                    1 => name.to_lowercase(),
                    _ => name.to_uppercase(),
                };
            }
            let style = if unit.is_none() {
                UnitStyle::None
            } else {
                style
            };
            Col {
                role,
                name,
                unit: if style == UnitStyle::None { None } else { unit },
                style,
            }
        })
}

fn layout_strategy() -> impl Strategy<Value = Layout> {
    let delim = prop_oneof![
        3 => Just(None),
        1 => Just(Some(',')),
        1 => Just(Some(';')),
        1 => Just(Some('|')),
        1 => Just(Some('\t')),
        1 => Just(Some(':')),
    ];
    (delim, any::<bool>()).prop_flat_map(|(delim, records)| {
        let space_ok = delim.is_some() && delim != Some('\t');
        let observables = prop::sample::subsequence(
            vec![
                Role::Potential,
                Role::Kinetic,
                Role::Total,
                Role::Conserved,
                Role::Temperature,
                Role::Pressure,
                Role::Volume,
                Role::Density,
            ],
            2..6,
        );
        let records = if records && delim.is_none() {
            prop_oneof![Just(Some(false)), Just(Some(true))].boxed()
        } else {
            Just(None).boxed()
        };
        (
            observables,
            any::<bool>(),
            col_strategy(Role::Step, false),
            col_strategy(Role::Time, false),
            prop::collection::vec(col_strategy(Role::Potential, space_ok), 8),
            records,
        )
            .prop_flat_map(move |(obs, with_time, step, time, _, records)| {
                let cols: Vec<BoxedStrategy<Col>> = obs
                    .iter()
                    .map(|&r| col_strategy(r, space_ok).boxed())
                    .collect();
                (
                    cols,
                    Just(step),
                    Just(with_time.then_some(time)),
                    Just(records),
                    layout_rest(delim),
                )
            })
            .prop_map(move |(obs, mut step, time, records, rest)| {
                let mut cols = Vec::new();
                step.unit = None;
                step.style = UnitStyle::None;
                cols.push(step);
                if let Some(mut t) = time {
                    if DATA_ONLY.contains(&t.name.to_lowercase().as_str()) {
                        t.unit = None;
                        t.style = UnitStyle::None;
                    }
                    cols.push(t);
                }
                cols.extend(obs);
                let mut l = rest;
                l.cols = cols;
                l.delim = delim;
                l.records = records;
                sanitize(l)
            })
    })
}

fn layout_rest(delim: Option<char>) -> impl Strategy<Value = Layout> {
    (
        (
            prop::sample::select(vec![" ", "  ", "\t", " \t ", "    "]),
            any::<bool>(),
            any::<bool>(),
            prop::collection::vec(
                (
                    prop::sample::select(vec![
                        "title",
                        "thermostat",
                        "seed",
                        "box",
                        "run id",
                        "dt",
                    ]),
                    prop::sample::select(vec![
                        "water box",
                        "42",
                        "0.002",
                        "velocity rescaling",
                        "3.0 3.0 3.0",
                    ]),
                    prop::sample::select(vec!['=', ':']),
                ),
                0..4,
            ),
            prop::sample::select(vec![
                HeaderAt::Plain,
                HeaderAt::Comment,
                HeaderAt::Tag,
                HeaderAt::Label,
            ]),
            any::<bool>(),
            prop::option::of(3usize..9),
        ),
        (
            prop::sample::select(vec!["\n", "\r\n", "\r"]),
            any::<bool>(),
            prop::option::of(prop::sample::select(vec!["DATA", "thermo:", "ENERGY", ">"])),
            any::<bool>(),
            any::<bool>(),
            0u8..4,
            any::<bool>(),
            12usize..40,
            any::<u64>(),
        ),
    )
        .prop_map(
            move |(
                (gap, outer, rules, preamble, header_at, units_line, repeat),
                (ending, mixed_endings, tag, free_text, bom, number_style, quoted, rows, seed),
            )| Layout {
                cols: Vec::new(),
                delim,
                gap,
                outer,
                rules,
                preamble: preamble
                    .into_iter()
                    .map(|(k, v, m)| (k.to_string(), v.to_string(), m))
                    .collect(),
                header_at,
                units_line,
                repeat,
                ending,
                mixed_endings,
                tag,
                free_text,
                bom,
                number_style,
                quoted,
                records: None,
                rows,
                seed,
            },
        )
}

/// Combinations that are ambiguous on purpose are drawn as their plain variant.
fn sanitize(mut l: Layout) -> Layout {
    if l.delim == Some(':') {
        // `key: value` and `Label:` read as fields of a colon-separated table.
        for p in &mut l.preamble {
            p.2 = '=';
        }
        if l.header_at == HeaderAt::Label {
            l.header_at = HeaderAt::Plain;
        }
        // A tag's own colon cannot be told from the delimiter.
        if l.tag == Some("thermo:") {
            l.tag = Some("DATA");
        }
    }
    if l.header_at == HeaderAt::Tag && l.tag.is_none() {
        l.header_at = HeaderAt::Plain;
    }
    if l.delim.is_none() || l.delim == Some('\t') || l.delim == Some(',') {
        l.outer = false;
    }
    if l.delim != Some(',') {
        l.quoted = false;
    }
    if l.records.is_some() {
        l.tag = None;
        l.units_line = false;
        l.repeat = None;
        l.header_at = HeaderAt::Plain;
        for c in &mut l.cols {
            if matches!(
                c.style,
                UnitStyle::Line | UnitStyle::Paren | UnitStyle::Bracket
            ) {
                c.style = UnitStyle::Glued;
            }
        }
    }
    let has_line = l.cols.iter().any(|c| c.style == UnitStyle::Line);
    if !l.units_line && has_line {
        for c in &mut l.cols {
            if c.style == UnitStyle::Line {
                c.style = UnitStyle::Bracket;
            }
        }
    }
    if l.units_line
        && !l
            .cols
            .iter()
            .any(|c| c.unit.is_some() && c.style == UnitStyle::Line)
    {
        l.units_line = false;
    }
    // A repeated header needs a layout where it is a header again.
    l
}

/// The header text of a column (without the units-line part).
fn header_name(c: &Col) -> String {
    match (c.style, c.unit) {
        (UnitStyle::None, _) | (UnitStyle::Line, _) | (_, None) => c.name.clone(),
        (UnitStyle::Paren, Some(u)) => format!("{} ({})", c.name, u.text),
        (UnitStyle::ParenGlued, Some(u)) => format!("{}({})", c.name, u.text),
        (UnitStyle::Bracket, Some(u)) => format!("{}[{}]", c.name, u.text),
        (UnitStyle::Glued, Some(u)) => format!("{}_{}", c.name, u.glued),
        (UnitStyle::Slash, Some(u)) => {
            if u.text.contains('/') {
                format!("{}/({})", c.name, u.text)
            } else {
                format!("{}/{}", c.name, u.text)
            }
        }
    }
}

fn units_cell(c: &Col, whitespace: bool) -> String {
    match (c.style, c.unit) {
        (UnitStyle::Line, Some(u)) => match c.name.len() % 3 {
            0 => format!("[{}]", u.text),
            1 => format!("({})", u.text),
            _ => u.text.to_string(),
        },
        _ if whitespace => "-".to_string(),
        _ => String::new(),
    }
}

fn number(v: f64, style: u8, k: usize) -> String {
    match (style + k as u8) % 4 {
        0 => format!("{v:.6}"),
        1 => format!("{v:.6e}"),
        2 => format!("{v:.6e}").replace('e', "D"),
        _ => format!("{v:>14.5}"),
    }
}

/// The parsed value of a printed number (Fortran D read as e).
fn read_back(s: &str) -> f64 {
    s.trim().replace('D', "e").parse().unwrap_or(f64::NAN)
}

struct Written {
    bytes: Vec<u8>,
    /// Raw values per row and column as printed.
    raw: Vec<Vec<f64>>,
    preamble: usize,
}

fn write(l: &Layout) -> Written {
    let mut rng = Rng(l.seed | 1);
    let whitespace = l.delim.is_none();
    let sep = match l.delim {
        None => l.gap.to_string(),
        Some('\t') => "\t".to_string(),
        Some(c) => format!("{c}{}", if l.seed.is_multiple_of(2) { " " } else { "" }),
    };
    let mut lines: Vec<Vec<u8>> = Vec::new();
    let text = |s: &str| s.as_bytes().to_vec();
    let latin1 = |s: &str| -> Vec<u8> {
        s.chars()
            .map(|c| u8::try_from(u32::from(c)).unwrap_or(b'?'))
            .collect()
    };
    let use_latin1 = l.cols.iter().any(|c| c.unit.is_some_and(|u| u.latin1));
    let join = |cells: &[String]| -> String {
        let body = cells.join(&sep);
        if l.outer {
            let c = l.delim.unwrap_or(' ');
            format!("{c} {body} {c}")
        } else {
            body
        }
    };
    let rule = |k: usize| match k % 4 {
        0 => "+--------+----------+---------+".to_string(),
        1 => "=====================".to_string(),
        2 => "\u{2500}\u{2500}\u{2500}\u{253c}\u{2500}\u{2500}\u{2500}".to_string(),
        _ => "~~~~~~~~~~~~~~".to_string(),
    };
    for (k, v, m) in &l.preamble {
        lines.push(text(&format!("{k} {m} {v}")));
    }
    let tag_prefix = |s: String| match l.tag {
        Some(t) if t.ends_with(|c: char| c.is_ascii_alphanumeric() || c == ':') => {
            format!(
                "{t}{}{s}",
                if l.delim.is_some() && !l.outer {
                    sep.clone()
                } else {
                    " ".into()
                }
            )
        }
        Some(t) => format!("{t}{s}"),
        None => s,
    };
    let header_line = || -> Vec<Vec<u8>> {
        let names: Vec<String> = l.cols.iter().map(header_name).collect();
        let h = join(&names);
        let h = match l.header_at {
            HeaderAt::Plain => h,
            HeaderAt::Comment => format!("# {h}"),
            HeaderAt::Tag => tag_prefix(h),
            HeaderAt::Label => format!("Columns: {h}"),
        };
        let mut out = vec![if use_latin1 { latin1(&h) } else { text(&h) }];
        if l.units_line {
            let cells: Vec<String> = l.cols.iter().map(|c| units_cell(c, whitespace)).collect();
            let ul = join(&cells);
            let ul = match l.header_at {
                HeaderAt::Comment => format!("# {ul}"),
                HeaderAt::Tag => tag_prefix(ul),
                _ => ul,
            };
            out.push(if use_latin1 { latin1(&ul) } else { text(&ul) });
        }
        out
    };
    if l.records.is_none() {
        if l.rules {
            lines.push(text(&rule(0)));
        }
        lines.extend(header_line());
        if l.rules {
            lines.push(text(&rule(l.seed as usize)));
        }
    }
    let step0 = [0usize, 1000, 5][l.seed as usize % 3];
    let every = [1usize, 10, 500][(l.seed >> 3) as usize % 3];
    let dt = [0.002f64, 0.5, 1.0, 0.01][(l.seed >> 5) as usize % 4];
    let mut raw = Vec::new();
    for r in 0..l.rows {
        if let Some(n) = l.repeat {
            if r > 0 && r % n == 0 && l.records.is_none() {
                lines.extend(header_line());
            }
        }
        if l.free_text && r % 5 == 3 {
            lines.push(text(match r % 3 {
                0 => "WARNING: neighbour list rebuilt",
                1 => "writing checkpoint",
                _ => "note: something happened here",
            }));
        }
        let mut cells = Vec::new();
        let mut values = Vec::new();
        for (ci, c) in l.cols.iter().enumerate() {
            let s = match c.role {
                Role::Step => format!("{}", step0 + r * every),
                Role::Time => {
                    let scale = c.unit.map_or(1.0, |u| u.scale);
                    format!("{:.4}", (r as f64 * dt) / scale)
                }
                role => {
                    let base: f64 = match role {
                        Role::Temperature => 300.0,
                        Role::Pressure => 1.0,
                        Role::Volume => 27.0,
                        Role::Density => 1000.0,
                        _ => -5000.0,
                    };
                    let canonical = base + (rng.next() - 0.5) * base.abs().max(10.0) * 0.02;
                    let u = c.unit.unwrap_or(u("", "", 1.0, 0.0));
                    number((canonical - u.offset) / u.scale, l.number_style, ci)
                }
            };
            values.push(read_back(&s));
            let s = if l.quoted {
                format!("\"{}\"", s.trim())
            } else {
                s
            };
            cells.push(s);
        }
        raw.push(values);
        let line = match l.records {
            Some(false) => l
                .cols
                .iter()
                .zip(&cells)
                .map(|(c, v)| format!("{}={}", header_name(c), v.trim()))
                .collect::<Vec<_>>()
                .join(" "),
            Some(true) => format!(
                "{{{}}}",
                l.cols
                    .iter()
                    .zip(&cells)
                    .map(|(c, v)| format!("\"{}\": {}", header_name(c), v.trim().replace('D', "e")))
                    .collect::<Vec<_>>()
                    .join(", ")
            ),
            None => tag_prefix(join(&cells)),
        };
        lines.push(text(&line));
    }
    if l.rules && l.records.is_none() {
        lines.push(text(&rule(3)));
    }
    let mut bytes = Vec::new();
    if l.bom {
        bytes.extend_from_slice(b"\xEF\xBB\xBF");
    }
    let endings = ["\n", "\r\n", "\r"];
    for (i, line) in lines.iter().enumerate() {
        bytes.extend_from_slice(line);
        let e = if l.mixed_endings {
            endings[(i + l.seed as usize) % 3]
        } else {
            l.ending
        };
        bytes.extend_from_slice(e.as_bytes());
    }
    Written {
        bytes,
        raw,
        preamble: l.preamble.len(),
    }
}

fn check(l: &Layout) -> Result<(), TestCaseError> {
    let w = write(l);
    let (table, _guess) = parse_bytes_guessing(&w.bytes, ParseOptions::default());
    let shown = String::from_utf8_lossy(&w.bytes).replace('\r', "\\r\n");
    prop_assert_eq!(table.skipped_count, 0, "skipped lines in\n{}", shown);
    prop_assert_eq!(table.segments.len(), 1, "segments in\n{}", shown);
    let seg = &table.segments[0];
    prop_assert_eq!(seg.rows(), l.rows, "rows in\n{}", shown);
    if l.records.is_none() {
        prop_assert_eq!(
            table.metadata_lines as usize,
            w.preamble,
            "preamble in\n{}",
            shown
        );
    }
    for (ci, c) in l.cols.iter().enumerate() {
        let col = seg
            .columns
            .iter()
            .find(|x| x.spec.field == Some(ci))
            .ok_or_else(|| TestCaseError::fail(format!("column {ci} missing")))?;
        prop_assert_eq!(
            col.spec.role,
            Some(c.role),
            "role of column {} '{}' in\n{}",
            ci + 1,
            col.spec.name,
            shown
        );
        let u = c.unit.unwrap_or(u("", "", 1.0, 0.0));
        for (r, row) in w.raw.iter().enumerate() {
            let want = row[ci] * u.scale + u.offset;
            let got = col.values[r];
            prop_assert!(
                (got - want).abs() <= 1e-9 * want.abs().max(1.0),
                "row {} column {} '{}': {} != {} in\n{}",
                r,
                ci + 1,
                col.spec.name,
                got,
                want,
                shown
            );
        }
    }
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 2000, max_shrink_iters: 2000, ..ProptestConfig::default() })]

    /// Every drawn layout is read with no option: every row, every value, every role.
    #[test]
    fn every_layout_is_read_without_options(l in layout_strategy()) {
        check(&l)?;
    }
}
