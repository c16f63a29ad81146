//! Timing helper shared by the benchmark examples.

/// Run `f` three times, print the best wall time under `label`, return the last result.
pub fn best_of_3<T>(label: &str, mut f: impl FnMut() -> T) -> T {
    let mut best = f64::INFINITY;
    let mut out = None;
    for _ in 0..3 {
        let t0 = std::time::Instant::now();
        let v = f();
        best = best.min(t0.elapsed().as_secs_f64());
        out = Some(v);
    }
    println!("{label:<62} {best:>7.3} s");
    out.expect("three runs")
}
