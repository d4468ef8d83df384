//! The layouts generated logs are written in: different layouts exercise column mapping.

use std::io::{self, Write};

use super::generator::Frame;
use super::ScenarioSpec;

/// How the generated log is laid out: different layouts exercise column mapping.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LogStyle {
    /// Whitespace table under a `#` header with units in parentheses.
    Whitespace,
    /// Comma-separated with a quoted header and units in brackets.
    Csv,
    /// Chatty text log: data rows start with the tag word `DATA`, free text between them.
    Tagged,
    /// Tab-separated, energies in kcal/mol, volume in Å³, density in g/cm³, time in fs.
    Tab,
    /// Fixed-width columns with Fortran `D` exponents and `****` for overflow.
    Fortran,
}

impl LogStyle {
    /// Every style.
    pub const ALL: [LogStyle; 5] = [
        LogStyle::Whitespace,
        LogStyle::Csv,
        LogStyle::Tagged,
        LogStyle::Tab,
        LogStyle::Fortran,
    ];

    /// The kebab-case name used on the command line.
    pub fn name(self) -> &'static str {
        match self {
            LogStyle::Whitespace => "whitespace",
            LogStyle::Csv => "csv",
            LogStyle::Tagged => "tagged",
            LogStyle::Tab => "tab",
            LogStyle::Fortran => "fixed-width",
        }
    }

    /// Looks a style up by its name.
    pub fn from_name(name: &str) -> Option<LogStyle> {
        LogStyle::ALL.into_iter().find(|s| s.name() == name)
    }

    /// The usual file extension for the style.
    pub fn extension(self) -> &'static str {
        match self {
            LogStyle::Csv => "csv",
            LogStyle::Tab => "tsv",
            _ => "log",
        }
    }
}

/// Column names of the generated logs, per style (headers with their units).
fn header_fields(style: LogStyle) -> [&'static str; 10] {
    match style {
        LogStyle::Whitespace | LogStyle::Tagged => [
            "step",
            "time(ps)",
            "temperature(K)",
            "pressure(bar)",
            "potential(kJ/mol)",
            "kinetic(kJ/mol)",
            "total(kJ/mol)",
            "conserved(kJ/mol)",
            "volume(nm^3)",
            "density(kg/m^3)",
        ],
        LogStyle::Csv => [
            "\"Step\"",
            "\"Time [ps]\"",
            "\"Temperature [K]\"",
            "\"Pressure [bar]\"",
            "\"Potential Energy [kJ/mol]\"",
            "\"Kinetic Energy [kJ/mol]\"",
            "\"Total Energy [kJ/mol]\"",
            "\"Conserved Energy [kJ/mol]\"",
            "\"Box Volume [nm^3]\"",
            "\"Density [kg/m^3]\"",
        ],
        LogStyle::Tab => [
            "step",
            "time[fs]",
            "temp[K]",
            "press[atm]",
            "epot[kcal/mol]",
            "ekin[kcal/mol]",
            "etot[kcal/mol]",
            "econs[kcal/mol]",
            "vol[A^3]",
            "rho[g/cm^3]",
        ],
        LogStyle::Fortran => [
            "STEP",
            "TIME_PS",
            "TEMP_K",
            "PRESS_BAR",
            "EPOT",
            "EKIN",
            "ETOT",
            "ECONS",
            "VOLUME",
            "DENSITY",
        ],
    }
}

/// The system, its size and the output interval, for a preamble line.
fn setup_line(spec: &ScenarioSpec) -> String {
    let system = spec.system();
    format!(
        "system {} (invented): {} atoms, {} constraints, time step {} fs, a row every {} steps",
        system.name,
        spec.atoms,
        system.constraints(spec.atoms),
        spec.timestep_fs,
        spec.steps_per_row
    )
}

/// Writes generated logs in one of the styles. Keeps the row count for the chatty style's
/// interleaved text.
#[derive(Debug)]
pub struct LogWriter {
    style: LogStyle,
    rows_written: u64,
    line_buffer: String,
}

const KCAL_IN_KJ: f64 = 4.184;
const ATM_IN_BAR: f64 = 1.01325;

impl LogWriter {
    pub fn new(style: LogStyle) -> LogWriter {
        LogWriter {
            style,
            rows_written: 0,
            line_buffer: String::with_capacity(256),
        }
    }

    /// Writes the preamble and the header line.
    pub fn write_header(&mut self, spec: &ScenarioSpec, out: &mut impl Write) -> io::Result<()> {
        let fields = header_fields(self.style);
        match self.style {
            LogStyle::Whitespace => {
                writeln!(
                    out,
                    "# invented example log: {}",
                    spec.scenario.description()
                )?;
                writeln!(out, "# {}", setup_line(spec))?;
                writeln!(out, "# {}", fields.join("  "))?;
            }
            LogStyle::Csv => writeln!(out, "{}", fields.join(","))?,
            LogStyle::Tab => writeln!(out, "{}", fields.join("\t"))?,
            LogStyle::Tagged => {
                writeln!(out, "run started: {}", spec.scenario.description())?;
                writeln!(out, "setting up {}", setup_line(spec))?;
                writeln!(out, "columns: {}", fields.join(" "))?;
                writeln!(out, "DATA {}", fields.join(" "))?;
            }
            LogStyle::Fortran => {
                let mut line = String::new();
                for name in fields {
                    line.push_str(&format!("{name:>16}"));
                }
                writeln!(out, "{line}")?;
            }
        }
        Ok(())
    }

    /// Writes one data row (and, for the chatty style, an occasional line of free text).
    pub fn write_frame(&mut self, frame: &Frame, out: &mut impl Write) -> io::Result<()> {
        use std::fmt::Write as _;
        let line = &mut self.line_buffer;
        line.clear();
        // Formatting into a String cannot fail.
        let _ = match self.style {
            LogStyle::Whitespace | LogStyle::Tagged | LogStyle::Csv => {
                let separator = if self.style == LogStyle::Csv {
                    ","
                } else {
                    " "
                };
                if self.style == LogStyle::Tagged {
                    line.push_str("DATA ");
                }
                write_fields(line, frame, separator)
            }
            LogStyle::Tab => write!(
                line,
                "{}\t{:.1}\t{:.3}\t{:.4}\t{:.4}\t{:.4}\t{:.4}\t{:.4}\t{:.2}\t{:.6}",
                frame.step,
                frame.time_ps * 1000.0,
                frame.temperature,
                frame.pressure / ATM_IN_BAR,
                frame.potential / KCAL_IN_KJ,
                frame.kinetic / KCAL_IN_KJ,
                frame.total / KCAL_IN_KJ,
                frame.conserved / KCAL_IN_KJ,
                frame.volume * 1000.0,
                frame.density / 1000.0
            ),
            LogStyle::Fortran => {
                let _ = write!(line, "{:>16}", frame.step);
                for value in frame.quantities() {
                    push_fortran_field(line, value);
                }
                Ok(())
            }
        };
        line.push('\n');
        self.rows_written += 1;
        if self.style == LogStyle::Tagged && self.rows_written.is_multiple_of(50) {
            let _ = writeln!(
                line,
                "note: wrote checkpoint after step {} (informational)",
                frame.step
            );
        }
        out.write_all(line.as_bytes())
    }
}

/// Writes the ten fields of a row in canonical units, joined by `separator`.
fn write_fields(line: &mut String, frame: &Frame, separator: &str) -> std::fmt::Result {
    use std::fmt::Write as _;
    let s = separator;
    write!(
        line,
        "{}{s}{:.3}{s}{:.3}{s}{:.2}{s}{:.4}{s}{:.4}{s}{:.4}{s}{:.4}{s}{:.5}{s}{:.3}",
        frame.step,
        frame.time_ps,
        frame.temperature,
        frame.pressure,
        frame.potential,
        frame.kinetic,
        frame.total,
        frame.conserved,
        frame.volume,
        frame.density
    )
}

/// Appends `value` as a 16-character field in `D` exponent notation, or `****` filling the
/// field when it does not fit (as fixed-width printers do on overflow).
pub(crate) fn push_fortran_field(line: &mut String, value: f64) {
    use std::fmt::Write as _;
    if !value.is_finite() || value.abs() >= 1e99 {
        line.push_str("        ********");
        return;
    }
    let formatted = format!("{value:.7E}");
    let (mantissa, exponent) = formatted.split_once('E').unwrap_or((&formatted, "0"));
    let exponent: i32 = exponent.parse().unwrap_or(0);
    let sign = if exponent < 0 { '-' } else { '+' };
    let _ = write!(
        line,
        "{:>16}",
        format!("{mantissa}D{sign}{:02}", exponent.abs())
    );
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fortran_fields_use_d_exponents_and_stars() {
        let mut line = String::new();
        push_fortran_field(&mut line, -12345.678);
        assert_eq!(line.trim(), "-1.2345678D+04");
        line.clear();
        push_fortran_field(&mut line, f64::NAN);
        assert_eq!(line.trim(), "********");
    }
}
