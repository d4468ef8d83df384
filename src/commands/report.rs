//! `plateau report FILE`: what the statistics say about a log, as text (default, for people),
//! markdown (`--format markdown`, for a lab notebook) or JSON (`--format json`, schema in
//! `docs/report-schema.md`); `--svg DIR` writes one plot per quantity; `--timings` prints
//! the ingest and statistics times to standard error.

use std::io::Write;
use std::path::Path;
use std::time::Instant;

use crate::analysis::{time_values, RunAnalysis};
use crate::cli::{AlertArgs, InputArgs, StageArgs};
pub use crate::cli::{ReportArgs, ReportFormat};
use crate::error::Error;
use crate::report::{build_report, render_markdown, render_text, svg, Report, SourceInfo};
use crate::stages::{self, chain, StageOptions, StagedRun, Tolerances};
use crate::table::RunTable;
use std::path::PathBuf;

use super::check::analysis_options;

/// Reads, analyses and builds the report of one file (also used by tests).
pub fn analyse_file(
    file: &Path,
    input: &InputArgs,
    alerts: &AlertArgs,
) -> Result<(Report, RunTable, RunAnalysis, [f64; 2]), Error> {
    let (report, staged, times) = analyse_run(
        std::slice::from_ref(&file.to_path_buf()),
        input,
        alerts,
        &StageArgs::default(),
    )?;
    Ok((report, staged.table, staged.analysis, times))
}

/// Stage options from the command line (tolerances checked).
pub fn stage_options(args: &StageArgs) -> Result<StageOptions, Error> {
    let mut t = Tolerances::default();
    let positive = |v: f64, option: &str| {
        if v.is_finite() && v > 0.0 {
            Ok(v)
        } else {
            Err(Error::Usage(format!("{option}: must be a positive number")))
        }
    };
    if let Some(v) = args.min_force_tolerance {
        t.force = positive(v, "--min-force-tolerance")?;
    }
    if let Some(v) = args.min_energy_tolerance {
        t.energy = positive(v, "--min-energy-tolerance")?;
    }
    Ok(StageOptions { tolerances: t })
}

/// Reads one log, or several as a chain (in the order given), cuts the run into stages,
/// analyses it and builds the report. Settings come from the first file's folder.
pub fn analyse_run(
    files: &[PathBuf],
    input: &InputArgs,
    alerts: &AlertArgs,
    stage_args: &StageArgs,
) -> Result<(Report, StagedRun, [f64; 2]), Error> {
    let sopts = stage_options(stage_args)?;
    let t0 = Instant::now();
    let mut settings = None;
    let mut tables = Vec::with_capacity(files.len());
    for f in files {
        let (s, table) = super::load(f, input)?;
        settings.get_or_insert(s);
        tables.push(table);
    }
    let Some(settings) = settings else {
        return Err(Error::Usage("name at least one log FILE".to_string()));
    };
    let ingest = t0.elapsed().as_secs_f64();
    let opts = analysis_options(&settings, alerts)?;
    let until = opts.until_ps;
    let target_sem = opts.target_sem.clone();
    let t1 = Instant::now();
    let names: Vec<String> = files.iter().map(|f| f.display().to_string()).collect();
    let staged = if tables.len() == 1 {
        let table = tables.pop().unwrap_or_default();
        stages::judge_owned(table, None, &opts, &sopts)
    } else {
        let mut chain = chain::join(tables);
        let table = std::mem::take(&mut chain.table);
        stages::judge_owned(table, Some((&names, &chain)), &opts, &sopts)
    };
    let statistics = t1.elapsed().as_secs_f64();
    let bytes = files
        .iter()
        .map(|f| std::fs::metadata(f).map(|m| m.len()).unwrap_or(0))
        .sum();
    let mut report = build_report(
        &SourceInfo {
            path: names.join(" + "),
            bytes,
        },
        &staged.table,
        &staged.analysis,
        &staged.alerts,
        target_sem.as_ref().map(|(c, v)| (c.as_str(), *v)),
        until,
    );
    report.stages = staged.stages.clone();
    Ok((report, staged, [ingest, statistics]))
}

fn write_svgs(dir: &Path, table: &RunTable, analysis: &RunAnalysis) -> Result<(), Error> {
    let io_err = |source: std::io::Error| Error::Read {
        path: dir.to_path_buf(),
        source,
    };
    std::fs::create_dir_all(dir).map_err(io_err)?;
    let Some(seg) = table.segments.get(analysis.segment) else {
        return Ok(());
    };
    let rows: Vec<f64>;
    let times = match time_values(seg) {
        Some(t) => t,
        None => {
            rows = (0..seg.rows()).map(|i| i as f64).collect();
            &rows
        }
    };
    for (col, ca) in seg.columns.iter().zip(&analysis.columns) {
        if ca.equilibration.is_none() {
            continue; // step and time columns
        }
        let onset = ca
            .equilibration
            .and_then(|e| e.row())
            .and_then(|r| times.get(r).copied());
        let (mean, error) = match &ca.production {
            Some(p) => (Some(p.mean), p.sem_block.or(p.sem_from_g)),
            None => (None, None),
        };
        let doc = svg::render_svg(&svg::PlotInput {
            title: &ca.name,
            unit: &ca.unit,
            times,
            values: col.values(),
            onset_time: onset,
            mean,
            error,
        });
        let path = dir.join(svg::file_name(&ca.name));
        std::fs::write(&path, doc).map_err(|source| Error::Read { path, source })?;
    }
    Ok(())
}

/// Runs `plateau report`.
pub fn run(args: &ReportArgs, out: &mut dyn Write) -> Result<u8, Error> {
    if !args.more_files.is_empty() && !args.stages.chain {
        return Err(Error::Usage(
            "report reads one log; give --chain to read several as consecutive stages of one \
             system"
                .to_string(),
        ));
    }
    let mut files = vec![args.file.clone()];
    files.extend(args.more_files.iter().cloned());
    let (report, staged, [ingest, statistics]) =
        analyse_run(&files, &args.input, &args.alerts, &args.stages)?;
    let (table, analysis) = (staged.table, staged.analysis);
    if args.timings {
        eprintln!("ingest: {ingest:.3} s");
        eprintln!("statistics: {statistics:.3} s");
    }
    let text = match args.format {
        ReportFormat::Text => render_text(&report),
        ReportFormat::Markdown => render_markdown(&report),
        ReportFormat::Json => {
            let s = report
                .to_json()
                .map_err(|e| Error::Output(std::io::Error::other(e)))?;
            let mut s = crate::text::escape_json(&s).into_owned();
            s.push('\n');
            s
        }
    };
    super::emit(out, &text)?;
    if let Some(dir) = &args.svg {
        write_svgs(dir, &table, &analysis)?;
    }
    Ok(0)
}
