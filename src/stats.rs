//! Small summary statistics shared by several stages.

/// Median of the finite values (the mean of the two middle values for an even count); NaN when
/// there is no finite value.
pub fn median(values: impl IntoIterator<Item = f64>) -> f64 {
    let mut v: Vec<f64> = values.into_iter().filter(|x| x.is_finite()).collect();
    median_of_finite(&mut v)
}

/// [`median`] of values already known to be finite, reordering them in place (no allocation;
/// for hot loops over small sets). NaN when `v` is empty.
pub fn median_of_finite(v: &mut [f64]) -> f64 {
    if v.is_empty() {
        return f64::NAN;
    }
    v.sort_unstable_by(f64::total_cmp);
    let m = v.len() / 2;
    if v.len() % 2 == 1 {
        v[m]
    } else {
        0.5 * (v[m - 1] + v[m])
    }
}

#[cfg(test)]
mod tests {
    use super::median;

    #[test]
    fn odd_even_empty_and_non_finite() {
        assert_eq!(median([3.0, 1.0, 2.0]), 2.0);
        assert_eq!(median([4.0, 1.0, 3.0, 2.0]), 2.5);
        assert!(median([]).is_nan());
        assert_eq!(median([f64::NAN, 5.0, f64::INFINITY, 1.0]), 3.0);
    }
}
