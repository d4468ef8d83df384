//! Settings: `plateau.toml` (current folder or `--config`) merged with the command line.
//!
//! Precedence: command line > the chosen layout > the file's top level > defaults, resolved
//! once into a validated [`Settings`]. Keys are the command-line option names:
//!
//! ```toml
//! # plateau.toml
//! comment = ["#", ";"]
//! delimiter = "auto"            # auto | whitespace | comma | tab
//! timestep = "2fs"              # or a number in ps
//! atoms = 3000
//! constraints = 0
//! dof = 8997
//! ensemble = "nvt"              # nve | nvt | npt
//! layout = "chatty"             # layout used when --layout is not given
//! keep-rows = 10000             # check --follow: rows kept at full resolution per run
//!
//! [layouts.chatty]              # any name; pick with --layout chatty
//! row-tag = "THERMO"
//! map = ["temperature=Temp", "pressure=3:atm"]
//!
//! [[run]]                       # a run read from a command's output (watch, check --follow)
//! name = "equilibration"        # optional; shown instead of the command
//! command = ["ssh", "node7", "tail", "-c", "+{start-byte}", "-F", "/scratch/md.log"]
//!
//! [jobs]                        # defaults of --jobs
//! log-glob = "*.log"            # --log-glob
//! remote = ["/scratch"]         # --remote-dir (relative paths: from this file's folder)
//! every = "5s"                  # --jobs-every
//! ```
//!
//! `[[run]]` entries are followed when the command line names no file and no
//! `--source-command`. A layout holds the same keys as the top level (except `layout`,
//! `layouts`, `run`, `jobs`). Unknown
//! keys are rejected with the file name and the key. `--map` entries merge by role: a role
//! given at a higher level replaces that role's entries from lower levels.
//!
//! To add an input option: a field in [`crate::cli::InputArgs`], the same key in
//! [`InputConfig`] and [`FileConfig`] (and `FileConfig::top`), its merge in
//! [`Settings::merge`] (file levels first, then the command line), a field in [`Settings`],
//! and a valid and an invalid fixture under `tests/fixtures/configs_*`.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use serde::Deserialize;

use crate::cli::InputArgs;
use crate::error::ConfigError;
use crate::mapping::MapRequest;
use crate::parse::{DelimiterChoice, ParseOptions, DEFAULT_COMMENT_PREFIXES};
use crate::units::{parse_quantity, Dimension};

/// The settings file looked for in the current folder.
pub const CONFIG_FILE_NAME: &str = "plateau.toml";

/// Thermodynamic ensemble of a run (defined with the statistics; re-exported here).
pub use crate::stats::Ensemble;

/// A number in the canonical unit or a text with a suffix (`timestep = 0.002` or `"2fs"`).
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(untagged)]
pub enum NumberOrText {
    /// A bare number (canonical unit).
    Number(f64),
    /// A number with a unit suffix.
    Text(String),
}

/// A `[[run]]` entry: a run read from a command's standard output.
#[derive(Debug, Clone, PartialEq, Eq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RunConfig {
    /// The command as an argument list (program first); no shell.
    pub command: Vec<String>,
    /// The name shown for the run (default: the command).
    pub name: Option<String>,
}

/// The `[jobs]` table: defaults of `--jobs`.
#[derive(Debug, Clone, Default, PartialEq, Eq, Deserialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct JobsConfig {
    /// `--log-glob`.
    pub log_glob: Option<String>,
    /// `--remote-dir` folders.
    pub remote: Option<Vec<PathBuf>>,
    /// `--jobs-every`.
    pub every: Option<String>,
}

/// Job discovery settings from the file (`[jobs]`), checked; the command line's options
/// are applied by the commands.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct JobsSettings {
    /// Glob of a job's logs.
    pub log_glob: Option<String>,
    /// Folders read through the scheduler (absolute: relative ones are taken from the
    /// settings file's folder).
    pub remote: Vec<PathBuf>,
    /// How often the scheduler is asked.
    pub every: Option<std::time::Duration>,
}

/// Input options as written in the file (top level or a layout).
#[derive(Debug, Clone, Default, PartialEq, Deserialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct InputConfig {
    /// `--map` entries.
    pub map: Option<Vec<String>>,
    /// `--row-tag`.
    pub row_tag: Option<String>,
    /// `--comment` prefixes.
    pub comment: Option<Vec<String>>,
    /// `--delimiter`.
    pub delimiter: Option<DelimiterChoice>,
    /// `--timestep`.
    pub timestep: Option<NumberOrText>,
    /// `--atoms`.
    pub atoms: Option<u64>,
    /// `--constraints`.
    pub constraints: Option<u64>,
    /// `--dof`.
    pub dof: Option<u64>,
    /// `--ensemble`.
    pub ensemble: Option<Ensemble>,
}

/// The whole settings file. It repeats [`InputConfig`]'s keys instead of flattening it
/// because serde's `flatten` cannot be combined with `deny_unknown_fields`, and rejecting
/// unknown keys matters more here.
#[derive(Debug, Clone, Default, PartialEq, Deserialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct FileConfig {
    /// Layout used when `--layout` is not given.
    pub layout: Option<String>,
    /// Named layouts.
    #[serde(default)]
    pub layouts: BTreeMap<String, InputConfig>,
    /// `--map` entries.
    pub map: Option<Vec<String>>,
    /// `--row-tag`.
    pub row_tag: Option<String>,
    /// `--comment` prefixes.
    pub comment: Option<Vec<String>>,
    /// `--delimiter`.
    pub delimiter: Option<DelimiterChoice>,
    /// `--timestep`.
    pub timestep: Option<NumberOrText>,
    /// `--atoms`.
    pub atoms: Option<u64>,
    /// `--constraints`.
    pub constraints: Option<u64>,
    /// `--dof`.
    pub dof: Option<u64>,
    /// `--ensemble`.
    pub ensemble: Option<Ensemble>,
    /// `[alerts]`: alert thresholds (same keys as `--threshold`; unknown keys rejected).
    pub alerts: Option<crate::alert::Thresholds>,
    /// `--keep-rows` of `check --follow`: rows kept at full resolution per run (top level
    /// only: a cap on memory, not a property of a log's layout).
    pub keep_rows: Option<usize>,
    /// `[[run]]`: runs read from commands.
    #[serde(default)]
    pub run: Vec<RunConfig>,
    /// `[jobs]`: defaults of `--jobs`.
    pub jobs: Option<JobsConfig>,
}

impl FileConfig {
    /// Reads and checks a settings file.
    pub fn load(path: &Path) -> Result<FileConfig, ConfigError> {
        let text = std::fs::read_to_string(path).map_err(|source| ConfigError::Read {
            path: path.to_path_buf(),
            source,
        })?;
        FileConfig::parse(&text, path)
    }

    /// Parses settings text (`path` only names it in errors).
    pub fn parse(text: &str, path: &Path) -> Result<FileConfig, ConfigError> {
        toml::from_str(text).map_err(|e| ConfigError::Parse {
            path: path.to_path_buf(),
            message: e.to_string().trim_end().to_string(),
        })
    }

    fn top(&self) -> InputConfig {
        InputConfig {
            map: self.map.clone(),
            row_tag: self.row_tag.clone(),
            comment: self.comment.clone(),
            delimiter: self.delimiter,
            timestep: self.timestep.clone(),
            atoms: self.atoms,
            constraints: self.constraints,
            dof: self.dof,
            ensemble: self.ensemble,
        }
    }
}

/// Validated settings for reading a log.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Settings {
    /// What the parser needs.
    pub parse: ParseOptions,
    /// Time step in ps.
    pub timestep_ps: Option<f64>,
    /// `--atoms`.
    pub atoms: Option<u64>,
    /// `--constraints`.
    pub constraints: Option<u64>,
    /// `--dof`.
    pub dof: Option<u64>,
    /// `--ensemble`.
    pub ensemble: Option<Ensemble>,
    /// The settings file used, if any.
    pub config_file: Option<PathBuf>,
    /// The layout used, if any.
    pub layout: Option<String>,
    /// Alert thresholds from the settings file's `[alerts]` table (defaults otherwise);
    /// command-line overrides are applied by the commands.
    pub alerts: crate::alert::Thresholds,
    /// The row tag was guessed from the start of the log (no `--row-tag` given).
    pub row_tag_guessed: bool,
    /// What the start of the log said about its layout (delimiter, row tag), when looked at.
    pub layout_guess: Option<crate::parse::sniff::LayoutGuess>,
    /// `keep-rows` from the settings file (at least [`crate::fold::MIN_KEEP_ROWS`]); the
    /// command line's `--keep-rows` is applied by `check`.
    pub keep_rows: Option<usize>,
    /// `[[run]]` entries (checked: each has a program).
    pub runs: Vec<RunConfig>,
    /// `[jobs]` (checked).
    pub jobs: JobsSettings,
}

impl Settings {
    /// Degrees of freedom: `--dof`, else 3N − constraints − 3 when `--atoms` is known.
    pub fn degrees_of_freedom(&self) -> Option<u64> {
        self.dof.or_else(|| {
            let n = self.atoms?;
            n.checked_mul(3)?
                .checked_sub(self.constraints.unwrap_or(0).checked_add(3)?)
        })
    }

    /// Resolves the command line with the settings file (`--config`, else `plateau.toml`
    /// in `cwd` if it exists) into settings.
    pub fn resolve(args: &InputArgs, cwd: &Path) -> Result<Settings, ConfigError> {
        let (file, path) = match &args.config {
            Some(p) => (Some(FileConfig::load(p)?), Some(p.clone())),
            None => {
                let p = cwd.join(CONFIG_FILE_NAME);
                if p.is_file() {
                    (Some(FileConfig::load(&p)?), Some(p))
                } else {
                    (None, None)
                }
            }
        };
        Settings::merge(args, file.as_ref(), path.as_deref())
    }

    /// Merges the command line over a parsed settings file.
    pub fn merge(
        args: &InputArgs,
        file: Option<&FileConfig>,
        path: Option<&Path>,
    ) -> Result<Settings, ConfigError> {
        let origin = path.map_or_else(|| CONFIG_FILE_NAME.to_string(), |p| p.display().to_string());
        let mut levels: Vec<(String, InputConfig)> = Vec::new();
        let mut layout_used = None;
        if let Some(file) = file {
            levels.push((origin.clone(), file.top()));
            let wanted = args.layout.clone().or_else(|| file.layout.clone());
            if let Some(name) = wanted {
                let layout = file
                    .layouts
                    .get(&name)
                    .ok_or_else(|| ConfigError::UnknownLayout {
                        name: name.clone(),
                        known: file.layouts.keys().cloned().collect(),
                        origin: origin.clone(),
                    })?;
                levels.push((format!("{origin} [layouts.{name}]"), layout.clone()));
                layout_used = Some(name);
            }
        } else if let Some(name) = &args.layout {
            return Err(ConfigError::UnknownLayout {
                name: name.clone(),
                known: Vec::new(),
                origin: "the settings (no plateau.toml found; use --config FILE)".to_string(),
            });
        }

        let mut s = Settings {
            row_tag_guessed: false,
            config_file: path.map(Path::to_path_buf),
            layout: layout_used,
            alerts: file.and_then(|f| f.alerts.clone()).unwrap_or_default(),
            keep_rows: file.and_then(|f| f.keep_rows),
            ..Settings::default()
        };
        if let Some(n) = s.keep_rows {
            check_keep_rows(n).map_err(|message| ConfigError::Value {
                origin: origin.clone(),
                key: "keep-rows".into(),
                message,
            })?;
        }
        if let Some(file) = file {
            s.runs = check_runs(&file.run).map_err(|message| ConfigError::Value {
                origin: origin.clone(),
                key: "run".into(),
                message,
            })?;
            let base = path.and_then(Path::parent).unwrap_or(Path::new(""));
            if let Some(jobs) = &file.jobs {
                s.jobs = check_jobs(jobs, base).map_err(|(key, message)| ConfigError::Value {
                    origin: format!("{origin} [jobs]"),
                    key: key.into(),
                    message,
                })?;
            }
        }
        let mut maps: Vec<MapRequest> = Vec::new();
        for (origin, level) in &levels {
            if let Some(list) = &level.map {
                let mut parsed = Vec::new();
                for m in list {
                    parsed.push(m.parse::<MapRequest>().map_err(|e| ConfigError::Value {
                        origin: origin.clone(),
                        key: "map".into(),
                        message: e.to_string(),
                    })?);
                }
                merge_maps(&mut maps, parsed);
            }
            if let Some(t) = &level.row_tag {
                s.parse.row_tag = Some(t.clone());
            }
            if let Some(c) = &level.comment {
                s.parse.comment_prefixes = c.clone();
            }
            if let Some(d) = level.delimiter {
                s.parse.delimiter = d;
            }
            if let Some(t) = &level.timestep {
                s.timestep_ps = Some(timestep(t).map_err(|message| ConfigError::Value {
                    origin: origin.clone(),
                    key: "timestep".into(),
                    message,
                })?);
            }
            s.atoms = level.atoms.or(s.atoms);
            s.constraints = level.constraints.or(s.constraints);
            s.dof = level.dof.or(s.dof);
            s.ensemble = level.ensemble.or(s.ensemble);
        }
        // The command line.
        merge_maps(&mut maps, args.map.clone());
        if let Some(t) = &args.row_tag {
            s.parse.row_tag = Some(t.clone());
        }
        if !args.comment.is_empty() {
            s.parse.comment_prefixes = args.comment.clone();
        }
        if let Some(d) = &args.delimiter {
            // Checked by the command line's value parser already.
            s.parse.delimiter = DelimiterChoice::parse(d).unwrap_or_default();
        }
        s.timestep_ps = args.timestep.or(s.timestep_ps);
        s.atoms = args.atoms.or(s.atoms);
        s.constraints = args.constraints.or(s.constraints);
        s.dof = args.dof.or(s.dof);
        s.ensemble = args.ensemble.or(s.ensemble);

        s.parse.maps = maps;
        s.parse.timestep_ps = s.timestep_ps;
        s.parse.comment_prefixes.retain(|p| !p.trim().is_empty());
        if s.parse
            .row_tag
            .as_deref()
            .is_some_and(|t| t.trim().is_empty())
        {
            return Err(ConfigError::Value {
                origin: "settings".into(),
                key: "row-tag".into(),
                message: "the row tag must not be empty".into(),
            });
        }
        if let (Some(n), Some(c)) = (s.atoms, s.constraints) {
            if s.dof.is_none() && s.degrees_of_freedom().is_none_or(|d| d == 0) {
                return Err(ConfigError::Value {
                    origin: "settings".into(),
                    key: "constraints".into(),
                    message: format!("{c} constraints leave no degrees of freedom for {n} atoms"),
                });
            }
        }
        Ok(s)
    }

    /// The comment prefixes in force, or the defaults' description.
    pub fn default_comment_prefixes() -> Vec<String> {
        DEFAULT_COMMENT_PREFIXES
            .iter()
            .map(|s| s.to_string())
            .collect()
    }
}

/// A cap on the rows kept at full resolution: at least [`crate::fold::MIN_KEEP_ROWS`].
pub fn check_keep_rows(n: usize) -> Result<usize, String> {
    if n >= crate::fold::MIN_KEEP_ROWS {
        Ok(n)
    } else {
        Err(format!(
            "{n} rows is too few to keep: at least {} (the alert detectors look back about a \
             thousand rows)",
            crate::fold::MIN_KEEP_ROWS
        ))
    }
}

/// `[[run]]` entries: each needs a command whose program is not empty.
fn check_runs(runs: &[RunConfig]) -> Result<Vec<RunConfig>, String> {
    for (i, run) in runs.iter().enumerate() {
        let n = i + 1;
        match run.command.first() {
            None => return Err(format!("entry {n}: `command` is an empty list")),
            Some(p) if p.trim().is_empty() => {
                return Err(format!("entry {n}: the program (first word) is empty"))
            }
            Some(_) => {}
        }
        if run.name.as_deref().is_some_and(|n| n.trim().is_empty()) {
            return Err(format!("entry {n}: `name` is empty"));
        }
    }
    Ok(runs.to_vec())
}

/// `[jobs]`: a glob that is not empty, folders made absolute from `base`, a positive
/// period. Errors name the key.
fn check_jobs(jobs: &JobsConfig, base: &Path) -> Result<JobsSettings, (&'static str, String)> {
    if let Some(g) = &jobs.log_glob {
        if g.trim().is_empty() {
            return Err(("log-glob", "the log glob is empty".into()));
        }
    }
    let every = match &jobs.every {
        Some(text) => {
            let d = crate::units::parse_duration(text).map_err(|e| ("every", e.to_string()))?;
            if d.is_zero() {
                return Err(("every", "must be longer than zero".into()));
            }
            Some(d)
        }
        None => None,
    };
    let remote = jobs
        .remote
        .iter()
        .flatten()
        .map(|p| {
            if p.as_os_str().is_empty() {
                Err(("remote", "an empty folder name".to_string()))
            } else {
                Ok(base.join(p))
            }
        })
        .collect::<Result<Vec<_>, _>>()?;
    Ok(JobsSettings {
        log_glob: jobs.log_glob.clone(),
        remote,
        every,
    })
}

fn timestep(t: &NumberOrText) -> Result<f64, String> {
    let ps = match t {
        NumberOrText::Number(n) => *n,
        NumberOrText::Text(s) => parse_quantity(s, Dimension::Time).map_err(|e| e.to_string())?,
    };
    if ps > 0.0 && ps.is_finite() {
        Ok(ps)
    } else {
        Err("the time step must be positive".into())
    }
}

/// A role given at a higher level replaces that role's entries from lower levels.
fn merge_maps(base: &mut Vec<MapRequest>, over: Vec<MapRequest>) {
    let roles: Vec<_> = over.iter().map(|m| m.role).collect();
    base.retain(|m| !roles.contains(&m.role));
    base.extend(over);
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::mapping::Role;

    #[test]
    fn precedence() {
        let file = FileConfig::parse(
            r#"
timestep = 0.001
atoms = 10
map = ["temperature=2", "pressure=3"]
[layouts.a]
timestep = "2fs"
map = ["pressure=4:atm"]
row-tag = "DATA"
"#,
            Path::new("plateau.toml"),
        )
        .unwrap();
        let args = InputArgs {
            layout: Some("a".into()),
            map: vec!["temperature=5".parse().unwrap()],
            ..InputArgs::default()
        };
        let s = Settings::merge(&args, Some(&file), Some(Path::new("plateau.toml"))).unwrap();
        assert_eq!(s.timestep_ps, Some(0.002));
        assert_eq!(s.atoms, Some(10));
        assert_eq!(s.parse.row_tag.as_deref(), Some("DATA"));
        assert_eq!(s.parse.maps.len(), 2);
        assert!(s
            .parse
            .maps
            .iter()
            .any(|m| m.role == Role::Pressure && m.column == crate::mapping::ColumnRef::Index(4)));
        assert!(s.parse.maps.iter().any(
            |m| m.role == Role::Temperature && m.column == crate::mapping::ColumnRef::Index(5)
        ));
        assert_eq!(s.degrees_of_freedom(), Some(27));
    }

    #[test]
    fn unknown_key_and_layout() {
        let e = FileConfig::parse("colour = 1\n", Path::new("x/plateau.toml")).unwrap_err();
        let msg = e.to_string();
        assert!(
            msg.contains("x/plateau.toml") && msg.contains("colour"),
            "{msg}"
        );
        let e = FileConfig::parse("[layouts.a]\nrowtag = 'X'\n", Path::new("p.toml")).unwrap_err();
        assert!(e.to_string().contains("rowtag"));
        let file = FileConfig::parse("[layouts.a]\n", Path::new("p.toml")).unwrap();
        let args = InputArgs {
            layout: Some("b".into()),
            ..InputArgs::default()
        };
        let e = Settings::merge(&args, Some(&file), Some(Path::new("p.toml"))).unwrap_err();
        assert!(e.to_string().contains("'b'") && e.to_string().contains("a"));
    }

    #[test]
    fn runs_and_jobs_tables() {
        let text = r#"
[[run]]
command = ["srun", "--overlap", "--jobid=12", "tail", "-c", "+{start-byte}", "-F", "/s/md.log"]
name = "heat"

[[run]]
command = ["ssh", "node7", "tail -F x.log"]

[jobs]
log-glob = "{name}/*.log"
remote = ["/scratch", "local"]
every = "2s"
"#;
        let file = FileConfig::parse(text, Path::new("/proj/plateau.toml")).unwrap();
        let s = Settings::merge(
            &InputArgs::default(),
            Some(&file),
            Some(Path::new("/proj/plateau.toml")),
        )
        .unwrap();
        assert_eq!(s.runs.len(), 2);
        assert_eq!(s.runs[0].name.as_deref(), Some("heat"));
        assert_eq!(s.runs[0].command[4], "-c");
        // A word with blanks stays one word: a list is never split again.
        assert_eq!(s.runs[1].command[2], "tail -F x.log");
        assert_eq!(s.jobs.log_glob.as_deref(), Some("{name}/*.log"));
        assert_eq!(
            s.jobs.remote,
            vec![PathBuf::from("/scratch"), PathBuf::from("/proj/local")]
        );
        assert_eq!(s.jobs.every, Some(std::time::Duration::from_secs(2)));
    }

    #[test]
    fn bad_runs_and_jobs_are_refused_with_the_key() {
        let merge = |text: &str| {
            let file = FileConfig::parse(text, Path::new("p.toml"))?;
            Settings::merge(
                &InputArgs::default(),
                Some(&file),
                Some(Path::new("p.toml")),
            )
        };
        for (text, key) in [
            ("[[run]]\ncommand = []\n", "run"),
            ("[[run]]\ncommand = [\"\"]\n", "run"),
            ("[[run]]\ncommand = [\"tail\"]\nname = \" \"\n", "run"),
            ("[[run]]\nname = \"x\"\n", "command"),
            ("[[run]]\ncommand = \"tail -F x\"\n", "command"),
            ("[[run]]\ncommand = [\"tail\"]\nshell = true\n", "shell"),
            ("[jobs]\nlog-glob = \"\"\n", "log-glob"),
            ("[jobs]\nevery = \"0s\"\n", "every"),
            ("[jobs]\nevery = \"soon\"\n", "every"),
            ("[jobs]\nremote = [\"\"]\n", "remote"),
            ("[jobs]\nnodes = 3\n", "nodes"),
        ] {
            let e = merge(text).unwrap_err().to_string();
            assert!(e.contains("p.toml") && e.contains(key), "{text:?}: {e}");
        }
    }
}
