//! Development data for the two-lead vote fusion (`beats::fusion::VoteParams`): the beats of
//! both detectors on every lead, written for the analysis scripts of `scripts/fusion_dev/`.
//!
//! Usage:
//! - `cargo run --release --example fusion_dev_dump -- records DIR FILE.hea...`: per record,
//!   `DIR/NAME.json` (rate, length, reference beats and codes, each lead's Pan & Tompkins and
//!   Elgendi beats) and `DIR/NAME_K.f32` (lead K's samples, little-endian f32).
//! - `cargo run --release --example fusion_dev_dump -- raw DIR NAME...`: reads `DIR/NAME.meta.json`
//!   and `DIR/NAME_K.f32` (written by `scripts/fusion_dev/mknoise.py`) and writes `DIR/NAME.json`.

use anyhow::{bail, Context};
use beatfold::beats::{elgendi, pan_tompkins};
use beatfold::io::{self, ReadOptions};
use beatfold::params::Checked;
use serde_json::{json, Value};
use std::path::{Path, PathBuf};

fn both(x: &[f64], fs: f64) -> anyhow::Result<Value> {
    let pt = pan_tompkins(x, fs, &Checked::default())?.samples;
    let el = elgendi(x, fs, &Checked::default())?;
    Ok(json!({"pt": pt, "el": el}))
}

fn main() -> anyhow::Result<()> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    if args.len() < 2 {
        bail!("usage: fusion_dev_dump records|raw DIR ITEMS...");
    }
    let dir = PathBuf::from(&args[1]);
    for item in &args[2..] {
        match args[0].as_str() {
            "records" => {
                let rec = io::read_record(Path::new(item), &ReadOptions::default())?.record;
                let mut leads = Vec::new();
                for (k, l) in rec.leads.iter().enumerate() {
                    leads.push(both(&l.samples, rec.fs_hz)?);
                    let bytes: Vec<u8> = l
                        .samples
                        .iter()
                        .flat_map(|v| (*v as f32).to_le_bytes())
                        .collect();
                    io::write_atomic(&dir.join(format!("{}_{k}.f32", rec.name)), &bytes)?;
                }
                let v = json!({
                    "name": rec.name,
                    "fs": rec.fs_hz,
                    "n": rec.n_samples(),
                    "ref": rec.annotations.beats.iter().map(|b| b.sample).collect::<Vec<_>>(),
                    "codes": rec.annotations.beats.iter().map(|b| b.code).collect::<String>(),
                    "leads": leads,
                });
                io::write_atomic(
                    &dir.join(format!("{}.json", rec.name)),
                    v.to_string().as_bytes(),
                )?;
            }
            "raw" => {
                let meta = dir.join(format!("{item}.meta.json"));
                let text = std::fs::read_to_string(&meta)
                    .with_context(|| format!("{}: cannot read", meta.display()))?;
                let mut v: Value = serde_json::from_str(&text)?;
                let fs = v["fs"].as_f64().context("meta: no `fs`")?;
                let mut leads = Vec::new();
                for k in 0.. {
                    let f = dir.join(format!("{item}_{k}.f32"));
                    if !f.exists() {
                        break;
                    }
                    let b = std::fs::read(&f)?;
                    let x: Vec<f64> = b
                        .chunks_exact(4)
                        .map(|c| f32::from_le_bytes([c[0], c[1], c[2], c[3]]) as f64)
                        .collect();
                    leads.push(both(&x, fs)?);
                }
                v["leads"] = Value::Array(leads);
                io::write_atomic(&dir.join(format!("{item}.json")), v.to_string().as_bytes())?;
            }
            other => bail!("unknown mode `{other}` (records or raw)"),
        }
        eprintln!("{item}");
    }
    Ok(())
}
