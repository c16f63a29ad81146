//! Golden structure checks on the report figures (axis titles, series and point counts in the
//! SVG text, never pixels), the figure and time-range options, and the recurrence matrix.

mod report_fake;

use beatfold::params::Checked;
use beatfold::report::{write_all, ColourBy, Figure, ReportOptions};
use beatfold::rhythm::recurrence::{recurrence_matrix, RqaParams, Threshold};
use report_fake::{fake, label, FS_HZ, PERIOD};

/// Write only `select` as SVG with `opts` and return each figure's SVG text.
fn svgs(a: &beatfold::pipeline::Analysis, opts: ReportOptions) -> Vec<(Figure, String)> {
    let tmp = tempfile::tempdir().unwrap();
    let opts = ReportOptions { png: false, ..opts };
    let w = write_all(a, tmp.path(), &Checked::new(opts.clone()).unwrap()).unwrap();
    // Only the chosen figures are written (plus summary, results file and page).
    assert_eq!(w.files.len(), opts.select.len() + 3);
    opts.select
        .iter()
        .map(|f| {
            let p = tmp
                .path()
                .join("figures")
                .join(format!("{}.svg", f.file_stem()));
            (*f, std::fs::read_to_string(p).unwrap())
        })
        .collect()
}

fn one(a: &beatfold::pipeline::Analysis, fig: Figure, opts: ReportOptions) -> String {
    svgs(
        a,
        ReportOptions {
            select: vec![fig],
            ..opts
        },
    )
    .remove(0)
    .1
}

/// Filled rectangles of one colour in plotters' SVG output.
fn rects_filled(svg: &str, hex: &str) -> usize {
    svg.split("<rect")
        .skip(1)
        .filter(|r| {
            r.split("/>")
                .next()
                .unwrap_or("")
                .contains(&format!("fill=\"{hex}\""))
        })
        .count()
}

#[test]
fn figure_list_parses_names_numbers_and_all() {
    assert_eq!(
        Figure::parse_list("rr, trace").unwrap(),
        vec![Figure::Trace, Figure::Rr]
    );
    assert_eq!(
        Figure::parse_list("7,1,1").unwrap(),
        vec![Figure::Trace, Figure::Rr]
    );
    assert_eq!(Figure::parse_list("all").unwrap(), Figure::ALL.to_vec());
    assert_eq!(Figure::ALL.len(), 8);
    let e = Figure::parse_list("trace,bogus").unwrap_err().to_string();
    assert!(e.contains("bogus") && e.contains("figures"), "{e}");
    assert!(Figure::parse_list(" , ").is_err());
    assert_eq!(ColourBy::parse("Class").unwrap(), ColourBy::Class);
    assert!(ColourBy::parse("hue").is_err());
}

#[test]
fn time_range_is_checked() {
    let bad = [
        (Some(-1.0), None),
        (Some(f64::NAN), None),
        (None, Some(0.0)),
        (Some(30.0), Some(20.0)),
        (Some(5.0), Some(f64::INFINITY)),
    ];
    for (from_s, to_s) in bad {
        let o = ReportOptions {
            from_s,
            to_s,
            ..Default::default()
        };
        assert!(o.check().is_err(), "{from_s:?}..{to_s:?} accepted");
    }
    let o = ReportOptions {
        from_s: Some(20.0),
        to_s: Some(30.0),
        ..Default::default()
    };
    assert!(o.check().is_ok());
}

#[test]
fn recurrence_matrix_of_a_periodic_trajectory() {
    // A trajectory that returns to the same point every PERIOD steps: with a threshold below
    // the distance between neighbouring points, R_ij = 1 exactly when i − j is a multiple of the
    // period. Source: definition of the recurrence matrix, Marwan et al. (2007), Phys Rep 438,
    // eq. (3): R_ij = Θ(ε − ‖x_i − x_j‖).
    let circle = |n: usize, period: usize| {
        let data: Vec<f64> = (0..n)
            .flat_map(|i| {
                let th = 2.0 * std::f64::consts::PI * (i % period) as f64 / period as f64;
                [th.cos(), th.sin()]
            })
            .collect();
        beatfold::points::Points::new(n, 2, data).unwrap()
    };
    let p = circle(60, PERIOD);
    let params = RqaParams {
        threshold: Threshold::Distance(0.05),
        ..Default::default()
    };
    let (m, eps) = recurrence_matrix(&p, 5, 45, &Checked::new(params.clone()).unwrap()).unwrap();
    assert_eq!(eps, 0.05);
    assert_eq!(m.len(), 40 * 40);
    for i in 0..40 {
        for j in 0..40 {
            assert_eq!(
                m[i * 40 + j],
                (i as i64 - j as i64) % PERIOD as i64 == 0,
                "{i},{j}"
            );
        }
    }
    // Recurrence-rate threshold 10 %: with period 5 over 40 points, 8 points share each
    // position, so 5·C(8,2) = 140 of the 780 pairs (18 %) are at distance 0 and the 10 %
    // quantile of the distances is 0: exactly the pairs at multiples of the period recur.
    let p5 = circle(40, 5);
    let (m, eps) = recurrence_matrix(&p5, 0, 40, &Checked::default()).unwrap();
    assert!(eps.abs() < 1e-12, "{eps}");
    let off: usize = (0..40)
        .flat_map(|i| (0..40).map(move |j| (i, j)))
        .filter(|&(i, j)| i != j && m[i * 40 + j])
        .count();
    assert_eq!(off, 40 * 7);
    let params = RqaParams::default();
    assert!(recurrence_matrix(&p, 10, 61, &Checked::new(params.clone()).unwrap()).is_err());
    assert!(recurrence_matrix(&p, 10, 10, &Checked::new(params.clone()).unwrap()).is_err());
}

#[test]
fn trace_shows_the_chosen_range_with_beats_by_class() {
    let a = fake(300, "rec", "AFIB");
    let svg = one(
        &a,
        Figure::Trace,
        ReportOptions {
            from_s: Some(20.0),
            to_s: Some(30.0),
            ..Default::default()
        },
    );
    for w in [
        "Conditioned lead with detected beats, 20.0 to 30.0 s",
        "Time (s)",
        "Amplitude (mV)",
        "quality flag",
        "reference rhythm interval",
        "reference beat",
        "detected beat (N)",
        "detected beat (V)",
        beatfold::NOTICE_SHORT,
    ] {
        assert!(svg.contains(w), "trace lacks {w:?}");
    }
    // One circle per detected beat in [20 s, 30 s) and one legend circle per class present.
    let (i0, i1) = ((20.0 * FS_HZ) as usize, (30.0 * FS_HZ) as usize);
    let inside: Vec<usize> = (0..300)
        .filter(|&b| (i0..i1).contains(&a.beat_samples[b]))
        .collect();
    let mut classes: Vec<char> = inside.iter().map(|&b| label(b)).collect();
    classes.sort_unstable();
    classes.dedup();
    assert!(inside.len() >= 11, "{} beats in 10 s", inside.len());
    assert_eq!(svg.matches("<circle").count(), inside.len() + classes.len());
}

#[test]
fn beat_overlay_has_one_median_template_per_class() {
    let a = fake(300, "rec", "(N");
    let svg = one(&a, Figure::Beats, ReportOptions::default());
    let rows = &a.features.beat_index;
    for c in ['N', 'V', 'A'] {
        let n = rows.iter().filter(|&&b| label(b) == c).count();
        let want = format!("median template, class {c} (n = {n})");
        assert!(svg.contains(&want), "lacks {want:?}");
    }
    assert_eq!(svg.matches("median template").count(), 3);
    assert!(svg.contains("Time from R peak (s)"));
    // 240 windows at most, shared among the classes: at most 80 per class, taken with a
    // regular stride of ceil(n / 80).
    let per_class = |c: char| {
        let n = rows.iter().filter(|&&b| label(b) == c).count();
        n.div_ceil(n.div_ceil(80).max(1))
    };
    let shown = per_class('N') + per_class('V') + per_class('A');
    assert!(shown <= 240);
    assert!(
        svg.contains(&format!("({shown} of {} shown)", rows.len())),
        "overlay count"
    );
}

#[test]
fn embedding_projections_and_colourings() {
    let a = fake(300, "rec", "AFIB");
    let m = a.embedding.n;
    // Time: three projections of every point, a colour bar (no legend circles).
    let svg = one(&a, Figure::Embedding, ReportOptions::default());
    for w in ["ψ1–ψ2", "ψ1–ψ3", "ψ2–ψ3", "ψ3 (dimensionless)", "Time (s)"] {
        assert!(svg.contains(w), "lacks {w:?}");
    }
    assert_eq!(svg.matches("<circle").count(), 3 * m);
    // Class: a legend circle per class present (N, V, A).
    let svg = one(
        &a,
        Figure::Embedding,
        ReportOptions {
            colour_by: ColourBy::Class,
            ..Default::default()
        },
    );
    assert_eq!(svg.matches("<circle").count(), 3 * m + 3);
    for w in ["Beat class", "class N", "class V", "class A"] {
        assert!(svg.contains(w), "lacks {w:?}");
    }
    // Rhythm: the two reference labels.
    let svg = one(
        &a,
        Figure::Embedding,
        ReportOptions {
            colour_by: ColourBy::Rhythm,
            ..Default::default()
        },
    );
    assert_eq!(svg.matches("<circle").count(), 3 * m + 2);
    let lines: Vec<&str> = svg.lines().map(str::trim).collect();
    assert!(lines.contains(&"AFIB") && lines.contains(&"(N"));
    assert!(svg.contains("Reference rhythm"));
    // RR: a colour bar titled with the unit.
    let svg = one(
        &a,
        Figure::Embedding,
        ReportOptions {
            colour_by: ColourBy::Rr,
            ..Default::default()
        },
    );
    assert!(svg.contains("RR interval ending at the beat (s)"));
}

#[test]
fn trajectory_joins_the_beats_of_the_range() {
    let a = fake(300, "rec", "(N");
    let svg = one(
        &a,
        Figure::Trajectory,
        ReportOptions {
            from_s: Some(10.0),
            to_s: Some(40.0),
            ..Default::default()
        },
    );
    let times: Vec<f64> = a
        .features
        .beat_index
        .iter()
        .map(|&b| a.beat_samples[b] as f64 / FS_HZ)
        .collect();
    let inside = times
        .iter()
        .filter(|&&t| (10.0..=40.0).contains(&t))
        .count();
    assert!(svg.contains(&format!("{inside} beats, 10.0 to 40.0 s")));
    // A circle per beat plus one legend circle; three coordinate series and the joining line.
    assert_eq!(svg.matches("<circle").count(), inside + 1);
    for w in [
        "ψ1",
        "ψ2",
        "ψ3",
        "successive beats joined",
        "first beat",
        "Time (s)",
    ] {
        assert!(svg.contains(w), "lacks {w:?}");
    }
}

#[test]
fn recurrence_plot_shows_the_period() {
    let a = fake(300, "rec", "(N");
    let svg = one(&a, Figure::Recurrence, ReportOptions::default());
    for w in [
        "Beat number i",
        "Beat number j",
        "recurrence rate",
        "determinism DET",
        "laminarity LAM",
        "window in the recurrence plot",
    ] {
        assert!(svg.contains(w), "lacks {w:?}");
    }
    // Window of 200 beats (the display cap); the fake trajectory repeats every 10 beats, so each
    // row has 20 isolated recurrent cells (one rectangle each) — plus the legend swatch.
    assert!(svg.contains("beats 0–199"));
    assert_eq!(rects_filled(&svg, "#0072B2"), 200 * 20 + 1);
}

#[test]
fn rr_figure_has_tachogram_screen_and_poincare() {
    let a = fake(300, "rec", "AFIB");
    let svg = one(&a, Figure::Rr, ReportOptions::default());
    for w in [
        "RR tachogram",
        "Time (s)",
        "RR interval (s)",
        "RR(n) (s)",
        "RR(n+1) (s)",
        "irregular-rhythm screen (research)",
        "reference irregular rhythm",
        "Poincaré plot (SD1 14 ms, SD2 48 ms)",
        "successive RR pairs (298 of 298)",
    ] {
        assert!(svg.contains(w), "lacks {w:?}");
    }
    // 299 tachogram points, 298 Poincaré pairs, one legend circle.
    assert_eq!(svg.matches("<circle").count(), 299 + 298 + 1);
}
