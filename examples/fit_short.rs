//! Fit the irregular-rhythm score on labelled records and write its coefficient file:
//! `cargo run --release --example fit_short -- DIR [--labels FILE] [--out FILE]`
//! (labels default to DIR/REFERENCE.csv mapped A=irregular,N=regular,O=other,~=unreadable; the
//! library's file is made with `-- ../shared/data/cinc2017-sample --out
//! src/rhythm/irregular_score.json`).
//!
//! Every record's evidence is computed at the default parameters (the evidence does not depend
//! on the score), then `rhythm::score_fit::choose_and_fit` chooses the readability rule
//! (`min_agreement_plausible`, `min_kurtosis_plausible`), the L2 penalty and the threshold by inner cross-validation and
//! fits the logistic score on every readable record.
//! Without `--out` the file is printed. With `--dump FILE.csv` every record's measures are also
//! written, one line per record: the score's measures, the readability under each rule of
//! `READABILITY_RULES` (columns `readable_AGREEMENT_kKURTOSIS`), the organised-pattern rule, the label, and further candidate measures the
//! score does not use (the input of `scripts/short_measure_selection.py`). After a change upstream (beat detection, P-wave index,
//! f-wave measures) run this command again, then `validate_short` for the page. Research use
//! only.

use beatfold::params::Checked;
use beatfold::pipeline::AnalyzeParams;
use beatfold::rhythm::label_score::{read_labels, LabelMap};
use beatfold::rhythm::score_fit::{
    choose_and_fit, FitRow, ScoreFile, FOLD_SEED, READABILITY_RULES,
};
use beatfold::rhythm::verdict::SCORE_FEATURE_NAMES;
use std::path::PathBuf;

fn main() -> anyhow::Result<()> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let usage = "usage: fit_short DIR [--labels FILE] [--out FILE] [--dump FILE.csv]";
    let dir = PathBuf::from(args.first().ok_or_else(|| anyhow::anyhow!(usage))?);
    let mut labels = dir.join("REFERENCE.csv");
    let mut out = None;
    let mut dump = None;
    let mut i = 1;
    while i < args.len() {
        let v = args
            .get(i + 1)
            .ok_or_else(|| anyhow::anyhow!("{} needs a value; {usage}", args[i]))?;
        match args[i].as_str() {
            "--labels" => labels = PathBuf::from(v),
            "--out" => out = Some(PathBuf::from(v)),
            "--dump" => dump = Some(PathBuf::from(v)),
            o => anyhow::bail!("unknown option {o}; {usage}"),
        }
        i += 2;
    }
    let map = LabelMap::parse("A=irregular,N=regular,O=other,~=unreadable")?;
    let p = Checked::<AnalyzeParams>::default();
    let t0 = std::time::Instant::now();
    let rows =
        beatfold::verdicts::verdicts_for_labels(&dir, &read_labels(&labels)?, &map, &p, false)?;
    let fit: Vec<FitRow> = rows
        .iter()
        .map(|r| FitRow::of(&r.evidence, r.truth, &p.verdict))
        .collect();
    if let Some(path) = &dump {
        beatfold::io::write_atomic(path, dump_csv(&rows, &fit).as_bytes())?;
    }
    let refs: Vec<&FitRow> = fit.iter().collect();
    let c = choose_and_fit(&refs, FOLD_SEED);
    let file = ScoreFile {
        fitted_by: format!(
            "cargo run --release --example fit_short -- {} --out src/rhythm/irregular_score.json",
            dir.display()
        ),
        records: fit.len(),
        irregular: fit.iter().filter(|r| r.irregular).count(),
        ridge: c.ridge,
        score_min: c.score_min,
        min_agreement_plausible: c.min_agreement_plausible,
        min_kurtosis_plausible: c.min_kurtosis_plausible,
        features: SCORE_FEATURE_NAMES.iter().map(|s| s.to_string()).collect(),
        score: c.score,
    };
    let text = file.to_text();
    // The file must load as the library will load it.
    ScoreFile::parse(&text, "the fitted file")?;
    eprintln!(
        "{} records ({} irregular): min_agreement_plausible {}, min_kurtosis_plausible {}, ridge {}, score_min {}, inner cross-validated F1 {:.3}; {:.1} s (wall)",
        file.records,
        file.irregular,
        file.min_agreement_plausible,
        file.min_kurtosis_plausible,
        file.ridge,
        file.score_min,
        c.inner_f1,
        t0.elapsed().as_secs_f64()
    );
    match out {
        Some(path) => beatfold::io::write_atomic(&path, text.as_bytes())?,
        None => print!("{text}"),
    }
    Ok(())
}

/// Measures computed for every record, candidates for the score (those the score already uses
/// are written once, among its measures).
const CANDIDATE_NAMES: [&str; 9] = [
    "fwave_organisation",
    "nrmssd",
    "off_base_share",
    "turning_point_ratio",
    "fwave_band_share",
    "fwave_dominant_hz",
    "p_wave_segment_share",
    "flagged_fraction",
    "kurtosis",
];

/// One CSV line per record (see the module documentation); NaN is written `NaN`.
fn dump_csv(rows: &[beatfold::verdicts::LabelledVerdict], fit: &[FitRow]) -> String {
    use std::fmt::Write as _;
    let extra: Vec<usize> = (0..CANDIDATE_NAMES.len())
        .filter(|&k| !SCORE_FEATURE_NAMES.contains(&CANDIDATE_NAMES[k]))
        .collect();
    let mut s = String::from("record,label,irregular,base_cycle");
    for (m, k) in READABILITY_RULES {
        let _ = write!(s, ",readable_{m}_k{k}");
    }
    for n in SCORE_FEATURE_NAMES
        .iter()
        .chain(extra.iter().map(|&k| &CANDIDATE_NAMES[k]))
    {
        let _ = write!(s, ",{n}");
    }
    s.push('\n');
    for (r, f) in rows.iter().zip(fit) {
        let e = &r.evidence;
        // Share of the 12-interval segments whose median P-wave index reaches 0.5 (0 without
        // an accepted template).
        let p_share = if e.p_template && !e.segments.is_empty() {
            e.segments.iter().filter(|g| g[3] >= 0.5).count() as f64 / e.segments.len() as f64
        } else {
            0.0
        };
        let cand = [
            e.fwave.organisation,
            e.nrmssd,
            e.off_base_share,
            e.turning_point_ratio,
            e.fwave.band_share,
            e.fwave.dominant_hz,
            p_share,
            e.flagged_fraction,
            e.kurtosis,
        ];
        let _ = write!(
            s,
            "{},{},{},{}",
            r.record, r.label, f.irregular as u8, f.base_cycle as u8
        );
        for b in f.readable {
            let _ = write!(s, ",{}", b as u8);
        }
        for v in f.x.iter().chain(extra.iter().map(|&k| &cand[k])) {
            let _ = write!(s, ",{v}");
        }
        s.push('\n');
    }
    s
}
