//! An EDF+ file written by an independent general-purpose library, read back by beatfold.
//!
//! Source: `tests/data/edf/edfio.edf` was written by edfio 0.4.18 (numpy 2.4.6) from the values
//! in `tests/data/edf/edfio.json`, by `scripts/make_edf_fixture.py` (docs/references.md §10). The
//! format is that of Kemp et al. (1992) and Kemp & Olivan (2003).

use beatfold::io::{self, ReadOptions};
use std::path::Path;

#[test]
fn an_edf_file_from_edfio_reads_with_its_values() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/edf");
    let want: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("edfio.json")).unwrap()).unwrap();
    let rec = io::read_record(&dir.join("edfio.edf"), &ReadOptions::default())
        .unwrap()
        .record;
    assert_eq!(rec.fs_hz, want["fs_hz"].as_f64().unwrap());
    assert_eq!(rec.leads.len(), 2, "the annotation signal is not a lead");
    let step = want["step_mv"].as_f64().unwrap();
    for (k, lead) in rec.leads.iter().enumerate() {
        assert_eq!(lead.name, want["labels"][k].as_str().unwrap());
        assert_eq!(lead.unit, want["unit"].as_str().unwrap());
        let expect: Vec<f64> = want["leads"][k]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_f64().unwrap())
            .collect();
        assert_eq!(lead.samples.len(), expect.len());
        // Values are multiples of one digital step, so the scaling must return each to well
        // within half a step (Kemp et al. 1992: phys = pmin + (dig − dmin)·(pmax − pmin)/(dmax − dmin)).
        for (i, (&got, &e)) in lead.samples.iter().zip(&expect).enumerate() {
            assert!(
                (got - e).abs() < 0.01 * step,
                "lead {k} sample {i}: read {got}, written {e}"
            );
        }
    }
    // Both ends of the digital range map to both ends of the physical range.
    assert!((rec.leads[1].samples[0] + 3.2768).abs() < 1e-9);
    assert!((rec.leads[1].samples[1] - 3.2767).abs() < 1e-9);
    // Start date and time from the header (dd.mm.yy hh.mm.ss).
    assert_eq!(
        rec.start_time.as_deref(),
        Some(want["start"].as_str().unwrap())
    );
    // EDF+ annotations: one-letter beat codes become reference beats, `(AFIB` a rhythm change.
    let beats: Vec<(usize, char)> = rec
        .annotations
        .beats
        .iter()
        .map(|b| (b.sample, b.code))
        .collect();
    let want_beats: Vec<(usize, char)> = want["beats"]
        .as_array()
        .unwrap()
        .iter()
        .map(|b| {
            (
                b[0].as_u64().unwrap() as usize,
                b[1].as_str().unwrap().chars().next().unwrap(),
            )
        })
        .collect();
    assert_eq!(beats, want_beats);
    assert_eq!(rec.annotations.rhythms.len(), 1);
    assert_eq!(
        rec.annotations.rhythms[0].label,
        want["rhythm"][0].as_str().unwrap()
    );
    assert_eq!(
        rec.annotations.rhythms[0].start_s,
        want["rhythm"][1].as_f64().unwrap()
    );
}
