//! [`Live`]: the runs being followed, their follower, and the glob patterns that may find
//! more runs later.

use std::collections::{HashMap, HashSet};
use std::path::{Path, PathBuf};
use std::sync::Arc;

use crate::analysis::AnalysisOptions;
use crate::follow::{
    Clock, FollowError, FollowEvent, FollowOptions, FollowReceiver, FollowSet, Source, SourceId,
};
use crate::parse::ParseOptions;
use crate::stages::StageOptions;

use super::run::{Happened, LiveRun};
use super::{sniff_layout, RunId, RunSource, RunSpec};

/// How runs are read, analysed and followed.
#[derive(Debug, Clone)]
pub struct LiveOptions {
    /// How each log is read (a guessed row tag may be added per file).
    pub parse: ParseOptions,
    /// How runs are analysed; `None` only parses them (`export`).
    pub analysis: Option<AnalysisOptions>,
    /// Rows kept at full resolution per analysed run before older ones are folded.
    pub keep_rows: usize,
    /// How files are followed (events or polling, periods).
    pub follow: FollowOptions,
    /// Without a row tag in `parse`, look at the start of each existing file for data rows
    /// marked by a leading word and use that word.
    pub guess_row_tag: bool,
}

/// Why a run could not be followed.
#[derive(Debug, thiserror::Error)]
pub enum LiveError {
    /// The follower could not be started.
    #[error("cannot start following: {0}")]
    Start(#[source] FollowError),
    /// A source could not be handed to the follower.
    #[error("cannot follow {label}: {source}")]
    Add {
        label: String,
        #[source]
        source: FollowError,
    },
    /// `-` given twice.
    #[error("standard input (-) can be read only once")]
    StdinTwice,
    /// A run whose source must be handed over with `Live::add_source`.
    #[error("{0}: this source is handed over ready-made (Live::add_source)")]
    NeedsSource(String),
    /// `--chain` with no file.
    #[error("--chain needs at least one log file")]
    EmptyChain,
    /// A glob pattern that does not parse.
    #[error("'{pattern}' is not a valid file pattern: {message}")]
    Pattern { pattern: String, message: String },
}

/// A glob pattern whose matches are followed, now and as they appear.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Pattern {
    /// The pattern as given.
    pub text: String,
    /// Files it matched so far.
    pub matched: usize,
}

/// The runs being followed.
pub struct Live {
    options: LiveOptions,
    set: FollowSet,
    runs: Vec<LiveRun>,
    sources: HashMap<SourceId, RunId>,
    paths: HashSet<PathBuf>,
    stdin_taken: bool,
    patterns: Vec<Pattern>,
    /// How stages are judged (minimization tolerances), for every run.
    stage_options: StageOptions,
    /// Sources that are a file of a chain: their place in it.
    chain_files: HashMap<SourceId, usize>,
}

impl std::fmt::Debug for Live {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Live")
            .field("runs", &self.runs.len())
            .field("patterns", &self.patterns)
            .finish_non_exhaustive()
    }
}

/// Whether a command-line argument is a glob pattern (rather than a file name).
pub fn is_pattern(arg: &Path) -> bool {
    arg.to_str()
        .is_some_and(|s| s.contains(['*', '?', '[']) && !arg.exists())
}

impl Live {
    /// Starts the follower; events arrive on the returned receiver, to be handed back to
    /// [`Live::apply`].
    pub fn start(
        options: LiveOptions,
        clock: Arc<dyn Clock>,
    ) -> Result<(Live, FollowReceiver), LiveError> {
        let (set, rx) =
            FollowSet::start(options.follow.clone(), clock).map_err(LiveError::Start)?;
        Ok((
            Live {
                options,
                set,
                runs: Vec::new(),
                sources: HashMap::new(),
                paths: HashSet::new(),
                stdin_taken: false,
                patterns: Vec::new(),
                stage_options: StageOptions::default(),
                chain_files: HashMap::new(),
            },
            rx,
        ))
    }

    /// The options in use.
    pub fn options(&self) -> &LiveOptions {
        &self.options
    }

    /// Judges the stages of every run, now and later, with `options` (minimization
    /// tolerances; the defaults otherwise).
    pub fn set_stage_options(&mut self, options: StageOptions) {
        self.stage_options = options;
        for run in &mut self.runs {
            run.set_stage_options(options);
        }
    }

    /// Every run, in the order added (a [`RunId`] indexes this slice).
    pub fn runs(&self) -> &[LiveRun] {
        &self.runs
    }

    /// One run.
    pub fn run(&self, id: RunId) -> Option<&LiveRun> {
        self.runs.get(id.0)
    }

    /// One run, to change.
    pub fn run_mut(&mut self, id: RunId) -> Option<&mut LiveRun> {
        self.runs.get_mut(id.0)
    }

    /// The glob patterns watched for new files.
    pub fn patterns(&self) -> &[Pattern] {
        &self.patterns
    }

    /// Follows one run. A file already followed is not followed twice (its id is returned).
    pub fn add(&mut self, spec: RunSpec) -> Result<RunId, LiveError> {
        let analysis = self.options.analysis.clone();
        self.add_analysed(spec, analysis)
    }

    /// As [`Live::add`], with analysis options of the run's own in place of the shared
    /// ones (runs of different systems, targets or ensembles followed together).
    pub fn add_with_analysis(
        &mut self,
        spec: RunSpec,
        analysis: AnalysisOptions,
    ) -> Result<RunId, LiveError> {
        self.add_analysed(spec, Some(analysis))
    }

    fn add_analysed(
        &mut self,
        spec: RunSpec,
        analysis: Option<AnalysisOptions>,
    ) -> Result<RunId, LiveError> {
        if let RunSource::Path(p) = &spec.source {
            if let Some(run) = self.runs.iter().find(|r| r.spec().source == spec.source) {
                return Ok(run.id());
            }
            self.paths.insert(p.clone());
        }
        let mut parse = self.options.parse.clone();
        if let Some(path) = spec.source.path() {
            // The separator the data lines agree on (when `auto`), and the row tag when
            // asked to guess it.
            if let Some(mut guess) = sniff_layout(path, &parse) {
                if !self.options.guess_row_tag {
                    guess.row_tag = None;
                }
                guess.apply(&mut parse);
            }
        }
        let added = match &spec.source {
            RunSource::Path(p) => self.set.add_path(p.clone()),
            RunSource::Stdin => {
                if self.stdin_taken {
                    return Err(LiveError::StdinTwice);
                }
                self.stdin_taken = true;
                self.set.add_stdin()
            }
            RunSource::Other(_) => return Err(LiveError::NeedsSource(spec.label.clone())),
        };
        let source = added.map_err(|source| LiveError::Add {
            label: spec.label.clone(),
            source,
        })?;
        Ok(self.push_run(spec, parse, source, analysis, false))
    }

    /// Follows a run whose source is handed over ready-made (a command's output, a
    /// scheduler step attached to a job: see `follow::CommandSource`, `scheduler`); `spec`
    /// names it (its `source` is usually [`RunSource::Other`]).
    pub fn add_source(
        &mut self,
        spec: RunSpec,
        source: Box<dyn Source>,
    ) -> Result<RunId, LiveError> {
        let id = self
            .set
            .add_source(source)
            .map_err(|source| LiveError::Add {
                label: spec.label.clone(),
                source,
            })?;
        let parse = self.options.parse.clone();
        let analysis = self.options.analysis.clone();
        Ok(self.push_run(spec, parse, id, analysis, false))
    }

    fn push_run(
        &mut self,
        spec: RunSpec,
        parse: ParseOptions,
        source: SourceId,
        analysis: Option<AnalysisOptions>,
        chain: bool,
    ) -> RunId {
        let id = RunId(self.runs.len());
        self.sources.insert(source, id);
        // Without a file to look at first, the layout is guessed from the first lines (a
        // chain's layout was looked up in its first existing file).
        let guess_from_lines = spec.source.path().is_none() && !chain;
        let mut run = LiveRun::new(id, spec, parse, analysis, self.options.keep_rows);
        run.set_stage_options(self.stage_options);
        if guess_from_lines {
            run.guess_layout_from_first_lines(self.options.guess_row_tag);
        }
        self.runs.push(run);
        id
    }

    /// Follows `files` as one run: consecutive stages of one system, in the order given
    /// (`--chain`; see [`super::chain`]). The run is named after the first file; files
    /// that do not exist yet are waited for.
    pub fn add_chain(&mut self, files: &[PathBuf]) -> Result<RunId, LiveError> {
        let Some(first) = files.first() else {
            return Err(LiveError::EmptyChain);
        };
        let mut parse = self.options.parse.clone();
        if let Some(path) = files.iter().find(|p| p.is_file()) {
            if let Some(mut guess) = sniff_layout(path, &parse) {
                if !self.options.guess_row_tag {
                    guess.row_tag = None;
                }
                guess.apply(&mut parse);
            }
        }
        let mut spec = RunSpec::new(RunSource::Other(format!(
            "a chain of {} files",
            files.len()
        )));
        spec.label = match files.len() {
            1 => first.display().to_string(),
            n => format!("{} (chain of {n})", first.display()),
        };
        let mut ids = Vec::with_capacity(files.len());
        for p in files {
            let id = self
                .set
                .add_path(p.clone())
                .map_err(|source| LiveError::Add {
                    label: p.display().to_string(),
                    source,
                })?;
            self.paths.insert(p.clone());
            ids.push(id);
        }
        let analysis = self.options.analysis.clone();
        let Some((&head, rest)) = ids.split_first() else {
            return Err(LiveError::NeedsSource(spec.label));
        };
        let run = self.push_run(spec, parse, head, analysis, true);
        for (i, id) in std::iter::once(head)
            .chain(rest.iter().copied())
            .enumerate()
        {
            self.sources.insert(id, run);
            self.chain_files.insert(id, i);
        }
        if let Some(r) = self.runs.get_mut(run.0) {
            r.set_chain(files.to_vec());
        }
        Ok(run)
    }

    /// Follows what a command-line argument names: `-` (standard input), a glob pattern
    /// (the files matching now, and later ones through [`Live::discover`]) or a file
    /// (which may not exist yet).
    pub fn add_argument(&mut self, arg: &Path) -> Result<Vec<RunId>, LiveError> {
        if is_pattern(arg) {
            let text = arg.to_string_lossy().into_owned();
            glob::Pattern::new(&text).map_err(|e| LiveError::Pattern {
                pattern: text.clone(),
                message: e.msg.to_string(),
            })?;
            if !self.patterns.iter().any(|p| p.text == text) {
                self.patterns.push(Pattern { text, matched: 0 });
            }
            return self.discover();
        }
        self.add(RunSpec::new(RunSource::from_argument(arg)))
            .map(|id| vec![id])
    }

    /// Looks for new files matching the patterns and follows them. Returns the new runs.
    pub fn discover(&mut self) -> Result<Vec<RunId>, LiveError> {
        let mut found = Vec::new();
        for i in 0..self.patterns.len() {
            let Some(text) = self.patterns.get(i).map(|p| p.text.clone()) else {
                continue;
            };
            let Ok(paths) = glob::glob(&text) else {
                continue;
            };
            for path in paths.flatten() {
                if !path.is_file() || self.paths.contains(&path) {
                    continue;
                }
                let mut spec = RunSpec::new(RunSource::Path(path));
                spec.found_by = Some(text.clone());
                found.push(self.add(spec)?);
                if let Some(p) = self.patterns.get_mut(i) {
                    p.matched += 1;
                }
            }
        }
        Ok(found)
    }

    /// Hands one follower event to its run; `now` is the wall-clock second (Unix epoch).
    pub fn apply(
        &mut self,
        source: SourceId,
        event: FollowEvent,
        now: f64,
    ) -> Option<(RunId, Happened)> {
        let id = *self.sources.get(&source)?;
        let run = self.runs.get_mut(id.0)?;
        match self.chain_files.get(&source) {
            Some(&i) => Some((id, run.apply_chain(i, event, now))),
            None => Some((id, run.apply(event, now))),
        }
    }

    /// Analyses every run that has new rows. Returns those runs.
    pub fn analyse(&mut self) -> Vec<RunId> {
        self.runs
            .iter_mut()
            .filter_map(|r| r.analyse().then(|| r.id()))
            .collect()
    }

    /// Judges stalled output of every run at wall-clock second `now`. Returns whether any
    /// run's alerts changed.
    pub fn check_stalls(&mut self, now: f64) -> bool {
        let mut changed = false;
        for run in &mut self.runs {
            changed |= run.check_stall(now);
        }
        changed
    }

    /// Checks every file now, as a stat-check tick would.
    pub fn poll_now(&self) {
        self.set.poll_now();
    }

    /// Stops following (the runs are consumed; take what you need first).
    pub fn stop(self) -> Vec<LiveRun> {
        self.set.stop();
        self.runs
    }
}
