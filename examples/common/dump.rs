//! Point dumps shared by the benchmark examples (`--dump DIR`), read by the reference-library
//! timing scripts in `scripts/`.

/// Write `points` row-major as little-endian float64 to `dir/points.f64` (creating `dir`).
pub fn write_points(
    dir: &std::path::Path,
    points: &beatfold::points::Points,
) -> std::io::Result<()> {
    std::fs::create_dir_all(dir)?;
    let bytes: Vec<u8> = points.data.iter().flat_map(|v| v.to_le_bytes()).collect();
    std::fs::write(dir.join("points.f64"), bytes)
}

/// The `--dump DIR` option taken out of `args` (with its value), if present.
pub fn take_dump_option(args: &mut Vec<String>) -> Option<std::path::PathBuf> {
    let i = args.iter().position(|a| a == "--dump")?;
    let dir = args.get(i + 1).cloned().unwrap_or_else(|| ".".into());
    args.drain(i..(i + 2).min(args.len()));
    Some(std::path::PathBuf::from(dir))
}
