//! Beat-class separation on synthetic records with exact truth (every beat's sample and class
//! known from the generator), and the bench's handling of bad input. Invented signals here are
//! truth by construction, not a claim about real patients.

use beatfold::io::beat_table;
use beatfold::params::Checked;
use beatfold::pipeline::AnalyzeParams;
use beatfold::record::Record;
use beatfold::separate::{
    self, inter_patient, labelled_beats, within_record, BeatClass, SeparateParams, Separation,
};
use beatfold::synth::{synthesize, Scenario, SynthParams};
use rand::{Rng, SeedableRng};
use std::path::Path;

mod common;
use common::beatfold;

/// A resting record with `ectopic` share of premature ventricular (`V`) beats of the
/// generator's fixed ectopic shape.
fn record(seed: u64, minutes: f64, ectopic: f64) -> Record {
    let mut p = SynthParams::for_scenario(Scenario::Resting, minutes, 250.0, seed);
    p.ectopic_rate = ectopic;
    p.name = format!("syn{seed}");
    synthesize(&Checked::new(p.clone()).unwrap()).expect("synthetic record")
}

fn class_score(r: &Separation, space: &str, c: BeatClass) -> (f64, f64, usize) {
    let s = &r.spaces.iter().find(|s| s.0 == space).expect(space).1;
    let cs = &s.classes[c.index()];
    (cs.f1, cs.rank_index, cs.n)
}

#[test]
fn builtin_features_separate_v_from_n_within_and_across_records() {
    let p = beatfold::params::Checked::<AnalyzeParams>::default();
    let sp = SeparateParams::default();
    let recs: Vec<_> = [11, 12, 13]
        .iter()
        .map(|&s| labelled_beats(&record(s, 3.0, 0.1), &p, None).unwrap())
        .collect();
    for r in &recs {
        // Source: the generator's own beat list (exact truth); every reference beat is found.
        assert_eq!(r.counts.missed_reference, 0, "{}", r.record);
        assert!(r.class.contains(&BeatClass::V));
    }
    let w = within_record(&recs, &p, &Checked::new(sp.clone()).unwrap()).unwrap();
    let (fit, test) = recs.split_at(2);
    let x = inter_patient(fit, test, &p, &Checked::new(sp.clone()).unwrap()).unwrap();
    for (r, what) in [(&w, "within"), (&x, "inter")] {
        for space in ["diffusion", "pca", "features"] {
            let (f1, auc, n) = class_score(r, space, BeatClass::V);
            // Target of the bench: F1 ≥ 0.99 for V against N on beats of known shape.
            assert!(n >= 15, "{what} {space}: only {n} V beats");
            assert!(f1 >= 0.99, "{what} {space}: V F1 {f1}");
            assert!(auc >= 0.99, "{what} {space}: V rank index {auc}");
        }
    }
    let m = x.map.as_ref().expect("inter-patient map");
    assert_eq!(m.test.len(), test[0].class.len());
}

/// A feature table of seeded uniform random numbers for the labelled beats of `lb`, plus
/// `extra` rows at samples far from any beat, leaving out the beats at positions in `skip`.
fn random_table(lb: &separate::LabelledBeats, seed: u64, skip: &[usize], extra: usize) -> String {
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed);
    let mut s = String::from("sample,r1,r2,r3\n");
    for (i, &smp) in lb.samples.iter().enumerate() {
        if skip.contains(&i) {
            continue;
        }
        s.push_str(&format!(
            "{smp},{},{},{}\n",
            rng.gen::<f64>(),
            rng.gen::<f64>(),
            rng.gen::<f64>()
        ));
    }
    for e in 0..extra {
        // Halfway between two beats: more than 150 ms from both at any rate above 25 bpm.
        let mid = (lb.samples[10 + e] + lb.samples[11 + e]) / 2;
        s.push_str(&format!("{mid},0,0,0\n"));
    }
    s
}

#[test]
fn random_features_score_at_chance_and_table_gaps_are_counted() {
    let p = beatfold::params::Checked::<AnalyzeParams>::default();
    let rec = record(21, 5.0, 0.15);
    let plain = labelled_beats(&rec, &p, None).unwrap();
    let skip = [3, 40, 41];
    let text = random_table(&plain, 5, &skip, 2);
    let table = beat_table::parse(Path::new("random.csv"), &text).unwrap();
    let lb = labelled_beats(&rec, &p, Some(&table)).unwrap();
    assert_eq!(lb.counts.no_table_row, skip.len());
    assert_eq!(lb.counts.table_rows_unmatched, 2);
    assert_eq!(lb.counts.table_lines_unmatched.len(), 2);
    assert_eq!(lb.class.len(), plain.class.len() - skip.len());
    let r = within_record(&[lb], &p, &Checked::default()).unwrap();
    let (_, auc, n) = class_score(&r, "table-features", BeatClass::V);
    // Chance: the ROC area of a score independent of the class is 0.5 with SD
    // √((n₁+n₀+1)/(12 n₁ n₀)) (Hanley & McNeil 1982), about 0.03 for ~50 V among ~400 beats;
    // ±0.12 is four SDs.
    assert!(n >= 30, "{n} V beats");
    assert!((auc - 0.5).abs() < 0.12, "random table: V rank index {auc}");
    let (f1_rand, _, _) = class_score(&r, "table-features", BeatClass::V);
    let (f1_builtin, _, _) = class_score(&r, "features", BeatClass::V);
    assert!(f1_rand < 0.4, "random table: V F1 {f1_rand}");
    assert!(f1_builtin >= 0.99, "built-in: V F1 {f1_builtin}");
}

#[test]
fn bad_input_gets_clear_errors() {
    let p = beatfold::params::Checked::<AnalyzeParams>::default();
    let mut bare = record(31, 1.0, 0.1);
    bare.annotations.beats.clear();
    let e = labelled_beats(&bare, &p, None).unwrap_err().to_string();
    assert!(
        e.contains("syn31") && e.contains("no reference beat labels"),
        "{e}"
    );
    let one = labelled_beats(&record(32, 2.0, 0.0), &p, None).unwrap();
    let e = within_record(std::slice::from_ref(&one), &p, &Checked::default())
        .unwrap_err()
        .to_string();
    assert!(e.contains("at least two classes"), "{e}");
    let two = labelled_beats(&record(33, 2.0, 0.1), &p, None).unwrap();
    let e = inter_patient(&[one], std::slice::from_ref(&two), &p, &Checked::default())
        .unwrap_err()
        .to_string();
    assert!(e.contains("fit beats") && e.contains("two classes"), "{e}");
    let e = inter_patient(
        std::slice::from_ref(&two),
        std::slice::from_ref(&two),
        &p,
        &Checked::default(),
    )
    .unwrap_err()
    .to_string();
    assert!(e.contains("both the fit and the test set"), "{e}");
    // A table whose rows match no beat of the record.
    let t = beat_table::parse(Path::new("far.csv"), "sample,x\n99999999,1\n").unwrap();
    let e = labelled_beats(&record(34, 1.0, 0.1), &p, Some(&t))
        .unwrap_err()
        .to_string();
    assert!(
        e.contains("far.csv") && e.contains("none of the 1 rows"),
        "{e}"
    );
}

#[test]
fn command_reports_spaces_and_table_gaps() {
    let tmp = tempfile::tempdir().unwrap();
    let d = tmp.path();
    for (name, seed) in [("a.csv", "41"), ("b.csv", "42")] {
        let o = beatfold(
            &[
                "synth",
                "--out",
                name,
                "--minutes",
                "2",
                "--seed",
                seed,
                "--scenario",
                "ambulatory-noisy",
            ],
            d,
        );
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    }
    let o = beatfold(
        &["separate", "--fit", "a.csv", "--test", "b.csv", "--json"],
        d,
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let j: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(j["protocol"], "inter-patient");
    assert_eq!(j["notice"], beatfold::NOTICE);
    for s in ["diffusion", "pca", "features"] {
        assert!(j["spaces"][s]["classes"]["V"]["se"].is_number(), "{s}");
        assert_eq!(j["spaces"][s]["confusion"].as_array().unwrap().len(), 5);
    }
    // Within-record is labelled as such.
    let o = beatfold(&["separate", "a.csv", "--space", "pca", "--json"], d);
    let j: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(j["protocol"], "within-record");
    assert!(j["caution"].as_str().unwrap().contains("generalise"));
    assert!(j["spaces"]["diffusion"].is_null());
    // Table rows for a record not read, and a missing record column with two records.
    std::fs::write(d.join("t.csv"), "record,sample,x\nzz,10,1\n").unwrap();
    let o = beatfold(&["separate", "a.csv", "b.csv", "--features", "t.csv"], d);
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(!o.status.success() && err.contains("t.csv"), "{err}");
    std::fs::write(d.join("u.csv"), "sample,x\n10,1\n").unwrap();
    let o = beatfold(&["separate", "a.csv", "b.csv", "--features", "u.csv"], d);
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        !o.status.success() && err.contains("no `record` column"),
        "{err}"
    );
    // analyze writes the record's within-record separation where reference labels exist.
    let o = beatfold(
        &["analyze", "a.csv", "--out", "out", "--figures", "trace"],
        d,
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let sj: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(d.join("out/summary.json")).unwrap())
            .unwrap();
    assert_eq!(sj["separation"]["protocol"], "within-record");
    assert!(
        sj["separation"]["spaces"]["diffusion"]["classes"]["V"]["n"]
            .as_u64()
            .unwrap()
            > 0
    );
    let html = std::fs::read_to_string(d.join("out/report.html")).unwrap();
    assert!(html.contains("Beat-class separation (within-record)"));
    let o = beatfold(&["inspect", "out/results.h5"], d);
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(
        text.contains("separation") && text.contains("confusion"),
        "{text}"
    );
    // Options that cannot apply together are refused.
    let o = beatfold(
        &["separate", "a.csv", "--fit", "b.csv", "--test", "a.csv"],
        d,
    );
    assert_eq!(o.status.code(), Some(2));
}

/// The record numbers listed after `label` in docs/references.md §12 (up to the next `;`).
fn listed(doc: &str, label: &str) -> Vec<String> {
    let start = doc.find(label).expect(label) + label.len();
    let end = start + doc[start..].find(';').expect("list ends with ;");
    doc[start..end]
        .split(|c: char| !c.is_ascii_digit())
        .filter(|s| s.len() == 3)
        .map(str::to_string)
        .collect()
}

#[test]
fn record_split_matches_the_cited_paper_as_written_in_the_references() {
    // Source: de Chazal, O'Dwyer & Reilly (2004), the DS1/DS2 split as written out in
    // docs/references.md §12 (from memory); the code must use exactly those lists.
    let doc = std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/docs/references.md"))
        .unwrap();
    assert_eq!(listed(&doc, "DS1 (fit):"), separate::DS1.to_vec());
    assert_eq!(listed(&doc, "DS2 (test):"), separate::DS2.to_vec());
    for paced in ["102", "104", "107", "217"] {
        assert!(!separate::DS1.contains(&paced) && !separate::DS2.contains(&paced));
    }
    assert!(separate::DS1.iter().all(|r| !separate::DS2.contains(r)));
}
