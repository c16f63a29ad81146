use super::*;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

pub(crate) fn cloud(n: usize, dim: usize, seed: u64, offset: f64) -> Points {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    Points::new(
        n,
        dim,
        (0..n * dim).map(|_| offset + rng.gen::<f64>()).collect(),
    )
    .unwrap()
}

/// Exhaustive search in f64 with the same distance (common practice: compare with the
/// definition): indices and squared distances, ties by index; `skip_self` leaves query i's own
/// reference row i out.
pub(crate) fn naive(r: &Points, q: &Points, k: usize, skip_self: bool) -> (Vec<usize>, Vec<f64>) {
    let mut idx = Vec::new();
    let mut d2 = Vec::new();
    for (i, x) in q.rows().enumerate() {
        let mut d: Vec<(f64, usize)> = r
            .rows()
            .enumerate()
            .filter(|&(j, _)| !(skip_self && j == i))
            .map(|(j, y)| (Points::dist2(x, y), j))
            .collect();
        d.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
        for (v, j) in d.into_iter().take(k) {
            idx.push(j);
            d2.push(v);
        }
    }
    (idx, d2)
}

const PATHS: [Path; 3] = [Path::Auto, Path::Tree, Path::Brute];

#[test]
fn every_path_equals_exhaustive_search_for_other_queries() {
    // Low and high dimension, a large common offset (where the expansion of the brute-force
    // screen loses most digits) and a query that duplicates a reference row.
    for (dim, offset) in [(2, 0.0), (7, 0.0), (30, 0.0), (10, 1.0e4)] {
        let r = cloud(1300, dim, dim as u64, offset);
        let q = cloud(90, dim, 100 + dim as u64, offset);
        let q = Points::new(
            q.n + 1,
            dim,
            q.data.iter().chain(r.row(17)).copied().collect(),
        )
        .unwrap();
        let (want_i, want_d) = naive(&r, &q, 9, false);
        for path in PATHS {
            let nb = knn_path(&r, &q, 9, path).unwrap();
            assert_eq!(nb.index, want_i, "dim {dim} offset {offset} {path:?}");
            assert_eq!(nb.dist2, want_d, "dim {dim} offset {offset} {path:?}");
            assert_eq!(
                (nb.index_of(q.n - 1)[0], nb.dist2_of(q.n - 1)[0]),
                (17, 0.0)
            );
        }
    }
}

#[test]
fn own_rows_with_and_without_self_equal_exhaustive_search_at_any_thread_count() {
    // Duplicated rows give ties at distance exactly 0, broken by index; the table is the same
    // for every path and for 1 and 2 threads.
    for dim in [3, 12, 24] {
        let mut r = cloud(1500, dim, 7 + dim as u64, 0.0);
        let first: Vec<f64> = r.row(0).to_vec();
        r.data[dim..2 * dim].copy_from_slice(&first);
        r.data[40 * dim..41 * dim].copy_from_slice(&first);
        for exclude_self in [false, true] {
            let (want_i, want_d) = naive(&r, &r, 11, exclude_self);
            for path in PATHS {
                let opts = Options { exclude_self, path };
                let run = |threads: usize| {
                    rayon::ThreadPoolBuilder::new()
                        .num_threads(threads)
                        .build()
                        .unwrap()
                        .install(|| knn_own(&r, r.n, 11, opts).unwrap())
                };
                let (a, b) = (run(1), run(2));
                assert_eq!(a, b, "dim {dim} {opts:?}: 1 and 2 threads differ");
                assert_eq!(a.index, want_i, "dim {dim} {opts:?}");
                assert_eq!(a.dist2, want_d, "dim {dim} {opts:?}");
            }
        }
        // Row 0 and its copies 1 and 40: exact zeros, by index; without itself, the copies.
        let nb = knn_own(&r, 5, 3, Options::default()).unwrap();
        assert_eq!(
            (nb.n, nb.index_of(0), nb.dist2_of(0)),
            (5, &[0, 1, 40][..], &[0.0; 3][..])
        );
        let opts = Options {
            exclude_self: true,
            path: Path::Auto,
        };
        let nb = knn_own(&r, 5, 2, opts).unwrap();
        assert_eq!(
            (nb.index_of(0), nb.dist2_of(0)),
            (&[1, 40][..], &[0.0; 2][..])
        );
        // The same object as references and queries runs as the own-rows search.
        assert_eq!(
            knn(&r, &r, 4).unwrap(),
            knn_own(&r, r.n, 4, Options::default()).unwrap()
        );
    }
}

#[test]
fn grid_ties_and_duplicates_give_the_exhaustive_table() {
    // A 3-d cloud on a coarse grid (many equal distances) with 200 duplicated points, and a
    // 2-d sheet in 6 coordinates: tree and brute force give exactly the exhaustive table.
    let mut rng = ChaCha8Rng::seed_from_u64(5);
    let mut data: Vec<f64> = (0..3 * 1500)
        .map(|_| (rng.gen::<f64>() * 8.0).floor())
        .collect();
    data.extend_from_within(..3 * 200);
    let grid = Points::new(1700, 3, data).unwrap();
    let flat: Vec<f64> = (0..2000)
        .flat_map(|_| {
            let (u, v) = (rng.gen::<f64>(), rng.gen::<f64>());
            [u, v, u + v, u - v, 0.5 * u, 0.0]
        })
        .collect();
    let flat = Points::new(2000, 6, flat).unwrap();
    for (pts, k) in [(&grid, 12), (&flat, 20)] {
        let (want_i, want_d) = naive(pts, pts, k, true);
        let want_d: Vec<f64> = want_d.into_iter().map(f64::sqrt).collect();
        assert_eq!(knn_table(pts, k).unwrap(), (want_i.clone(), want_d.clone()));
        for path in [Path::Tree, Path::Brute] {
            let opts = Options {
                exclude_self: true,
                path,
            };
            let got = knn_own(pts, pts.n, k, opts).unwrap().into_table();
            assert_eq!(got, (want_i.clone(), want_d.clone()), "{path:?}");
        }
    }
    // Every duplicated point has its copy at distance exactly 0 (without itself).
    let (_, d) = knn_table(&grid, 1).unwrap();
    assert!((1500..1700).all(|i| d[i] == 0.0));
    // The sheet has 2 intrinsic dimensions: the probes find the tree worth it; a 24-d cube
    // of the same size is left to brute force.
    assert!(KdTree::new(&flat).worth_it(20, true));
    let cube = cloud(2000, 24, 3, 0.0);
    assert!(!KdTree::new(&cube).worth_it(20, true));
}

#[test]
fn line_neighbours_and_clear_errors() {
    // Points 0, 1, 3, 6 on a line (values worked out by hand).
    let pts = Points::new(4, 1, vec![0.0, 1.0, 3.0, 6.0]).unwrap();
    let d = knn_distances(&pts, 2).unwrap();
    assert_eq!(d, vec![1.0, 3.0, 1.0, 2.0, 2.0, 3.0, 3.0, 5.0]);
    let (i, _) = knn_table(&pts, 2).unwrap();
    assert_eq!(i, vec![1, 2, 0, 2, 1, 0, 2, 1]);
    assert!(knn_distances(&pts, 4).is_err());
    assert!(knn_distances(&pts, 0).is_err());
    assert!(knn_table(&Points::new(3, 0, vec![]).unwrap(), 1).is_err());
    let r = cloud(50, 3, 1, 0.0);
    assert!(knn(&r, &r, 0).is_err());
    assert!(knn(&r, &r, 51).is_err());
    assert!(knn(&r, &cloud(3, 2, 1, 0.0), 2).is_err());
    assert!((Points::dist2(&[1.0, 2.0, 3.0, 4.0, 5.0], &[0.0; 5]) - 55.0).abs() < 1e-12);
}
