//! Stages: an invented five-stage preparation (src/scenario/stages.rs) written as one log
//! and as a chain of five logs, with the truth planted. plateau must find each stage, name
//! it, give the verdict that fits it, and give the same stage list and the same production
//! statistics both ways.
//!
//! Tolerances (ours, stated): the converged step of the minimization within one output
//! interval (10 steps), the end of the ramp within 3 rows, the row where the volume starts
//! to vary within 2 rows, the change of output interval within 1 row.

#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use std::path::PathBuf;

use assert_cmd::Command;
use plateau::alert::AlertKind;
use plateau::analysis::{AnalysisOptions, Analyzer};
use plateau::cli::{AlertArgs, InputArgs, StageArgs};
use plateau::commands::report::analyse_run;
use plateau::report::Report;
use plateau::scenario::stages::{five_stage_logs, StageLogs, StagePlan};
use plateau::stages::{Conditions, MinVerdict, StageKind};

fn write(dir: &tempfile::TempDir, name: &str, text: &str) -> PathBuf {
    let p = dir.path().join(name);
    std::fs::write(&p, text).unwrap();
    p
}

fn report(files: &[PathBuf], alerts: &AlertArgs) -> Report {
    analyse_run(files, &InputArgs::default(), alerts, &StageArgs::default())
        .unwrap()
        .0
}

fn both(logs: &StageLogs) -> (tempfile::TempDir, Report, Report) {
    let dir = tempfile::tempdir().unwrap();
    let one = write(&dir, "prep.log", &logs.one_log);
    let names = ["min.log", "heat.log", "nvt.log", "npt.log", "prod.log"];
    let chain: Vec<PathBuf> = names
        .iter()
        .zip(&logs.chain)
        .map(|(n, t)| write(&dir, n, t))
        .collect();
    let a = report(&[one], &AlertArgs::default());
    let b = report(&chain, &AlertArgs::default());
    (dir, a, b)
}

fn kinds(r: &Report) -> Vec<(StageKind, Option<Conditions>)> {
    r.stages.iter().map(|s| (s.kind, s.conditions)).collect()
}

#[test]
fn one_log_five_stages_found_with_planted_truth() {
    let logs = five_stage_logs(&StagePlan::default());
    let t = &logs.truth;
    let (_dir, r, _) = both(&logs);
    assert_eq!(
        kinds(&r),
        vec![
            (StageKind::Minimization, None),
            (StageKind::Heating, Some(Conditions::ConstantVolume)),
            (StageKind::Equilibration, Some(Conditions::ConstantVolume)),
            (StageKind::Equilibration, Some(Conditions::ConstantPressure)),
            (StageKind::Production, Some(Conditions::ConstantPressure)),
        ],
        "{:#?}",
        r.stages
    );
    // Minimization: converged, at the planted step within one output interval.
    let m = r.stages[0].minimization.as_ref().unwrap();
    assert_eq!(m.verdict, MinVerdict::Converged);
    let step = m.converged_step.unwrap();
    assert!(
        (step - t.converged_step).abs() <= 10.0,
        "{step} vs {}",
        t.converged_step
    );
    assert!(m.energy_change_per_step < 0.0);
    assert_eq!(r.stages[0].equilibration, None);
    // Heating: the ramp ends where planted, and was followed.
    let ramp_end = r.stages[2].first_row as i64;
    assert!(
        (ramp_end - t.ramp_end_row as i64).abs() <= 3,
        "{ramp_end} vs {}",
        t.ramp_end_row
    );
    assert_eq!(r.stages[1].verdict, "followed-ramp");
    let h = r.stages[1].heating.as_ref().unwrap();
    assert_eq!(h.schedule, "inferred");
    assert!(
        (h.rate_k_per_ps - 290.0 / 49.8).abs() < 0.2,
        "{}",
        h.rate_k_per_ps
    );
    // The volume starts to vary where planted.
    let varies = r.stages[3].first_row as i64;
    assert!(
        (varies - t.volume_varies_row as i64).abs() <= 2,
        "{varies} vs {}",
        t.volume_varies_row
    );
    // The output interval changes where planted.
    let prod = r.stages[4].first_row as i64;
    assert!((prod - t.production_row as i64).abs() <= 1);
    assert_eq!(r.stages[4].verdict, "equilibrated");
    assert_eq!(r.stages[4].first_row + r.stages[4].rows, t.rows as u64);
    // Production statistics exclude everything before production.
    let temp = r.columns.iter().find(|c| c.name == "temperature").unwrap();
    let p = temp.production.as_ref().unwrap();
    assert!(p.first_row >= r.stages[4].first_row);
    assert!((p.mean - 300.0).abs() < 1.5, "{}", p.mean);
    // A stage change is not a blow-up: no runaway anywhere (the constant volume that starts
    // to vary, the ramp, the descent).
    let runaways: Vec<_> = r
        .alerts
        .iter()
        .filter(|a| a.kind == AlertKind::Runaway)
        .collect();
    assert!(runaways.is_empty(), "{runaways:#?}");
}

#[test]
fn chain_and_one_log_agree() {
    let logs = five_stage_logs(&StagePlan::default());
    let (_dir, one, chain) = both(&logs);
    assert_eq!(kinds(&one), kinds(&chain), "{:#?}", chain.stages);
    for (i, (a, b)) in one.stages.iter().zip(&chain.stages).enumerate() {
        assert_eq!(a.verdict, b.verdict, "stage {i}");
        // In one log the end of the ramp is estimated from the temperature (noise 3 K, ramp
        // 1.16 K per row): within 3 rows of the file boundary; every other boundary is exact.
        let (start_tol, end_tol) = match i {
            1 => (0, 3),
            2 => (3, 0),
            _ => (0, 0),
        };
        assert!(a.first_row.abs_diff(b.first_row) <= start_tol, "stage {i}");
        let (ea, eb) = (a.first_row + a.rows, b.first_row + b.rows);
        assert!(ea.abs_diff(eb) <= end_tol, "stage {i}");
        if start_tol == 0 {
            match (a.start_time, b.start_time) {
                (Some(x), Some(y)) => assert!((x - y).abs() < 1e-6, "{x} vs {y}"),
                (x, y) => assert_eq!(x, y),
            }
        }
    }
    assert!(chain.stages[1]
        .file
        .as_deref()
        .unwrap()
        .ends_with("heat.log"));
    // Same production statistics, column by column.
    assert_eq!(one.columns.len(), chain.columns.len());
    for (a, b) in one.columns.iter().zip(&chain.columns) {
        assert_eq!(a.name, b.name);
        match (&a.production, &b.production) {
            (Some(x), Some(y)) => {
                assert_eq!(x.first_row, y.first_row, "{}", a.name);
                assert_eq!(x.count, y.count, "{}", a.name);
                let close = |u: f64, v: f64| (u - v).abs() <= 1e-9 * u.abs().max(1.0);
                assert!(
                    close(x.mean, y.mean),
                    "{}: {} vs {}",
                    a.name,
                    x.mean,
                    y.mean
                );
                assert!(close(x.std.unwrap(), y.std.unwrap()), "{}", a.name);
            }
            (None, None) => {}
            _ => panic!("{}: production on one side only", a.name),
        }
    }
}

/// A minimization that stalls far above the tolerance is flagged, and the tolerance is
/// overridable.
#[test]
fn stalled_minimization_and_tolerance_option() {
    let plan = StagePlan {
        min_f0: 2.0e7,
        min_rows: 60, // ends at step 590, force still 2e7·e^(−590/200) ≈ 1e6
        ..StagePlan::default()
    };
    let logs = five_stage_logs(&plan);
    let dir = tempfile::tempdir().unwrap();
    let min = write(&dir, "min.log", &logs.chain[0]);
    let r = report(std::slice::from_ref(&min), &AlertArgs::default());
    assert_eq!(r.stages.len(), 1);
    assert_eq!(r.stages[0].kind, StageKind::Minimization);
    assert_eq!(r.stages[0].verdict, "not-converged");
    let loose = StageArgs {
        min_force_tolerance: Some(5.0e6),
        ..StageArgs::default()
    };
    let r = analyse_run(&[min], &InputArgs::default(), &AlertArgs::default(), &loose)
        .unwrap()
        .0;
    assert_eq!(r.stages[0].verdict, "converged");
}

/// Regression: a constant column that starts to vary raised a critical runaway (a column
/// with no spread makes any change infinitely many robust SDs away). Checked on the
/// analyser alone, without the stage split, so the detector itself is tested.
#[test]
fn constant_column_that_starts_to_vary_is_no_runaway() {
    let logs = five_stage_logs(&StagePlan::default());
    let dir = tempfile::tempdir().unwrap();
    // nvt then npt written as one MD table (same header).
    let mut text = logs.chain[2].clone();
    let npt_rows: Vec<&str> = logs.chain[3].lines().skip(1).collect();
    let last_step = 249 * 100;
    for (i, l) in npt_rows.iter().enumerate() {
        let mut f: Vec<String> = l.split_whitespace().map(str::to_string).collect();
        f[0] = (last_step + 100 * (i + 1)).to_string();
        f[1] = format!("{:.3}", (last_step + 100 * (i + 1)) as f64 * 0.002);
        text.push_str(&f.join("  "));
        text.push('\n');
    }
    let p = write(&dir, "nvt_npt.log", &text);
    let table = plateau::ingest::read_path(&p, Default::default()).unwrap();
    let mut an = Analyzer::new(AnalysisOptions::default());
    an.update(&table, true, None, false);
    let runaway: Vec<_> = an
        .engine()
        .alerts()
        .iter()
        .filter(|a| a.kind == AlertKind::Runaway)
        .collect();
    assert!(runaway.is_empty(), "{runaway:#?}");
}

#[test]
fn cli_chain_and_its_usage_error() {
    let logs = five_stage_logs(&StagePlan::default());
    let dir = tempfile::tempdir().unwrap();
    let names = ["min.log", "heat.log", "nvt.log", "npt.log", "prod.log"];
    let files: Vec<PathBuf> = names
        .iter()
        .zip(&logs.chain)
        .map(|(n, t)| write(&dir, n, t))
        .collect();
    let out = Command::cargo_bin("plateau")
        .unwrap()
        .arg("report")
        .args(&files)
        .args(["--chain", "--format", "json"])
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let stages = v["stages"].as_array().unwrap();
    let k: Vec<&str> = stages.iter().map(|s| s["kind"].as_str().unwrap()).collect();
    assert_eq!(
        k,
        [
            "minimization",
            "heating",
            "equilibration",
            "equilibration",
            "production"
        ]
    );
    // Several files without --chain: a usage error (exit 2).
    Command::cargo_bin("plateau")
        .unwrap()
        .arg("report")
        .args(&files[..2])
        .assert()
        .code(2);
    // check --chain: healthy run, exit 0, the stages on standard error.
    let out = Command::cargo_bin("plateau")
        .unwrap()
        .arg("check")
        .args(&files)
        .arg("--chain")
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("minimization converged"), "{err}");
    assert_eq!(
        out.status.code(),
        Some(0),
        "{err}\n{}",
        String::from_utf8_lossy(&out.stdout)
    );
}

/// A force column known only by its unit (kcal/mol/Å, no force word in its name): found,
/// and the default tolerance (1000 kJ mol⁻¹ nm⁻¹, common practice) converted to its unit
/// (1 kcal/mol/Å = 41.84 kJ mol⁻¹ nm⁻¹: thermochemical calorie, NIST SP 811, exact). The
/// planted force decays as f0·exp(−s/λ) in kJ mol⁻¹ nm⁻¹, so it meets 1000 at
/// s = λ·ln(f0/1000); compared in the column's own unit without conversion it would meet
/// the tolerance far earlier.
#[test]
fn a_force_column_found_by_its_unit_gets_the_tolerance_in_that_unit() {
    let (f0, lambda, every) = (2.0e5_f64, 200.0_f64, 10u64);
    let mut text = String::from("# step  potential[kJ/mol]  maxF[kcal/mol/Å]\n");
    for i in 0..150u64 {
        let s = (i * every) as f64;
        let decay = (-s / lambda).exp();
        let e = -4.6e4 + 3.0e4 * decay;
        let f = f0 * decay / 41.84;
        text.push_str(&format!("{:>8}  {e:>14.4}  {f:>12.6}\n", i * every));
    }
    let dir = tempfile::tempdir().unwrap();
    let path = write(&dir, "min.log", &text);
    let r = report(&[path], &AlertArgs::default());
    assert_eq!(r.stages.len(), 1, "{:#?}", r.stages);
    let m = r.stages[0].minimization.as_ref().unwrap();
    assert_eq!(m.force_column.as_deref(), Some("maxF"));
    assert!(
        (m.force_tolerance - 1000.0 / 41.84).abs() < 1e-9,
        "{}",
        m.force_tolerance
    );
    let truth = lambda * (f0 / 1000.0).ln();
    let step = m.converged_step.unwrap();
    assert!(
        (step - truth).abs() <= every as f64,
        "converged at step {step}, planted {truth}"
    );
}
