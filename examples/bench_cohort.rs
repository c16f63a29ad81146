//! Release-build timings of cohort runs (see docs/cohort.md, "Speed").
//!
//! Usage:
//! - `cargo run --release --example bench_cohort -- stages DIR [N]`: the first N records of a
//!   folder (default 50), one thread, time spent per stage of the per-record work (reading,
//!   each analysis stage, writing the compact outputs), in milliseconds per record.
//! - `cargo run --release --example bench_cohort -- synth DIR N [SECONDS] [SEED]`: write N
//!   synthetic single-lead records of SECONDS (default 30) at 300 Hz into DIR (PhysioNet
//!   format 16), scenarios and seeds varying from record to record.
//! - `cargo run --release --example bench_cohort -- run DIR OUT [JOBS] [SHARDS]`: a whole
//!   cohort run with JOBS threads (default 2), as one run or as SHARDS shards then the merge;
//!   prints wall time of the records and of the merge, and the bytes written per record.

use beatfold::cohort::{self, CohortOptions, Shard};
use beatfold::io::{self, ReadOptions};
use beatfold::params::Checked;
use beatfold::pipeline::{self, AnalyzeParams, InputInfo};
use beatfold::synth::{synthesize, Scenario, SynthParams};
use std::path::{Path, PathBuf};
use std::time::Instant;

fn dir_size(p: &Path) -> u64 {
    let mut total = 0;
    if let Ok(rd) = std::fs::read_dir(p) {
        for e in rd.flatten() {
            let path = e.path();
            if path.is_dir() {
                total += dir_size(&path);
            } else if let Ok(m) = e.metadata() {
                total += m.len();
            }
        }
    }
    total
}

fn stages(dir: &Path, n: usize) -> anyhow::Result<()> {
    let specs = cohort::list_records(dir)?;
    let p = beatfold::params::Checked::<AnalyzeParams>::default();
    let mut t_read = 0.0;
    let mut t_stage = vec![0.0f64; pipeline::STAGES.len() + 1];
    let mut count = 0;
    for s in specs.iter().take(n) {
        let t0 = Instant::now();
        let Ok(l) = io::read_record(&s.path, &ReadOptions::default()) else {
            continue;
        };
        t_read += t0.elapsed().as_secs_f64();
        let info = InputInfo {
            name: s.name.clone(),
            sha256: None,
            warnings: Vec::new(),
        };
        let mut last = Instant::now();
        let mut cur = 0usize;
        let mut cb = |k: usize, _: &str| {
            let now = Instant::now();
            if let Some(t) = t_stage.get_mut(cur) {
                *t += (now - last).as_secs_f64();
            }
            last = now;
            cur = k + 1;
        };
        if pipeline::analyze(&l.record, &info, &p, &mut cb).is_ok() {
            count += 1;
        }
        if let Some(t) = t_stage.get_mut(cur) {
            *t += last.elapsed().as_secs_f64();
        }
    }
    let per = |t: f64| 1000.0 * t / count.max(1) as f64;
    println!("{count} records analysed, ms per record (one thread):");
    println!("  read {:.2}", per(t_read));
    for (k, name) in ["preparing"]
        .iter()
        .chain(pipeline::STAGES.iter())
        .enumerate()
    {
        println!(
            "  {name} {:.2}",
            per(t_stage.get(k).copied().unwrap_or(0.0))
        );
    }
    Ok(())
}

fn synth(dir: &Path, n: usize, seconds: f64, seed: u64) -> anyhow::Result<()> {
    std::fs::create_dir_all(dir)?;
    let scen = [
        Scenario::Resting,
        Scenario::TelemetryNight,
        Scenario::AmbulatoryNoisy,
    ];
    for i in 0..n {
        let mut sp = SynthParams::for_scenario(
            scen[i % scen.len()],
            seconds / 60.0,
            300.0,
            seed.wrapping_add(i as u64),
        );
        sp.leads = 1;
        let mut rec = synthesize(&Checked::new(sp.clone())?)?;
        rec.name = format!("S{i:05}");
        io::physionet::write_record(&rec, dir, 16, 1000.0)?;
    }
    println!("{n} records of {seconds} s in {}", dir.display());
    Ok(())
}

fn run(dir: &Path, out: &Path, jobs: usize, shards: usize) -> anyhow::Result<()> {
    let opts = CohortOptions {
        jobs,
        ..CohortOptions::default()
    };
    let t0 = Instant::now();
    let n;
    if shards <= 1 {
        let s = cohort::run(dir, out, &Checked::new(opts.clone())?)?;
        n = s.total;
        println!(
            "{} records: {} analysed, {} skipped, {} failed; whole run {:.2} s with {jobs} jobs",
            s.total,
            s.analysed,
            s.skipped,
            s.failed,
            t0.elapsed().as_secs_f64()
        );
    } else {
        let mut total = 0;
        for index in 0..shards {
            let o = CohortOptions {
                shard: Some(Shard {
                    index,
                    count: shards,
                }),
                ..opts.clone()
            };
            total = cohort::run(dir, out, &Checked::new(o.clone())?)?.total;
        }
        n = total;
        let t1 = Instant::now();
        println!(
            "{n} records in {shards} shards: {:.2} s with {jobs} jobs",
            (t1 - t0).as_secs_f64()
        );
        let pool = rayon::ThreadPoolBuilder::new().num_threads(jobs).build()?;
        pool.install(|| cohort::merge(out))?;
        println!("merge: {:.2} s", t1.elapsed().as_secs_f64());
    }
    let rec_bytes = dir_size(&out.join(cohort::RECORDS_DIR));
    println!(
        "per-record outputs: {:.1} KB a record on average; whole folder {:.1} MB",
        rec_bytes as f64 / 1024.0 / n.max(1) as f64,
        dir_size(out) as f64 / 1e6
    );
    Ok(())
}

fn main() -> anyhow::Result<()> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let arg = |i: usize| args.get(i).cloned();
    match arg(0).as_deref() {
        Some("stages") => stages(
            &PathBuf::from(arg(1).unwrap_or_default()),
            arg(2).map(|s| s.parse()).transpose()?.unwrap_or(50),
        ),
        Some("synth") => synth(
            &PathBuf::from(arg(1).unwrap_or_default()),
            arg(2).map(|s| s.parse()).transpose()?.unwrap_or(300),
            arg(3).map(|s| s.parse()).transpose()?.unwrap_or(30.0),
            arg(4).map(|s| s.parse()).transpose()?.unwrap_or(1),
        ),
        Some("run") => run(
            &PathBuf::from(arg(1).unwrap_or_default()),
            &PathBuf::from(arg(2).unwrap_or_default()),
            arg(3).map(|s| s.parse()).transpose()?.unwrap_or(2),
            arg(4).map(|s| s.parse()).transpose()?.unwrap_or(1),
        ),
        _ => anyhow::bail!("usage: bench_cohort stages DIR [N] | synth DIR N [SECONDS] [SEED] | run DIR OUT [JOBS] [SHARDS]"),
    }
}
