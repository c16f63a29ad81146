//! PhysioNet-format records: the text header (`.hea`), signal files in formats 16 and 212, and
//! MIT-format annotation files (e.g. `.atr`).
//!
//! Layouts follow the PhysioNet WFDB documentation of the header, signal and annotation files
//! (Moody, "WFDB Programmer's Guide"; see also `docs/formats.md`):
//! - header line 1: `name nsig fs nsamp [time [date]]`; one line per signal: `file format
//!   gain(baseline)/units adcres adczero initval checksum blocksize description`. Multi-segment
//!   records (`name/nseg`) are refused.
//! - format 16: little-endian 16-bit two's complement; format 212: pairs of 12-bit two's
//!   complement samples packed in 3 bytes.
//! - physical value = (adu − baseline) / gain.
//! - annotations: 16-bit little-endian words, 6-bit code and 10-bit time increment, with the
//!   pseudo-codes SKIP (59), NUM (60), SUB (61), CHN (62) and AUX (63).
//!
//! - the format field may carry samples per frame, skew and a byte offset,
//!   `format[xspf][:skew][+offset]`; a signal file named `*.mat` is a MATLAB v4 matrix (see
//!   [`super::matv4`]) whose data start at the byte offset.
//!
//! On reading, each signal's initial value and its 16-bit checksum are verified (a mismatch is a
//! warning, or an error under [`ChecksumPolicy::Strict`]).

use crate::error::{Error, Result};
use crate::record::{Annotations, BeatAnnotation, Lead, Record};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

/// One signal line of a header.
#[derive(Debug, Clone, PartialEq)]
pub struct SignalSpec {
    /// Signal file name (relative to the header).
    pub file: String,
    /// Storage format (16, 32 and 212 are supported).
    pub format: u32,
    /// ADC units per physical unit.
    pub gain: f64,
    /// ADC value of physical zero.
    pub baseline: i32,
    /// Physical unit.
    pub units: String,
    /// ADC resolution in bits.
    pub adc_res: u32,
    /// ADC zero.
    pub adc_zero: i32,
    /// First sample value (ADC units), if given.
    pub init_value: Option<i32>,
    /// 16-bit checksum of all samples, if given.
    pub checksum: Option<i16>,
    /// Description (lead name).
    pub description: String,
    /// Samples of this signal in each frame (`format x n`; 1 when absent).
    pub samples_per_frame: usize,
    /// Skew in frames (`format : n`): sample `t` of the signal is stored in frame `t + skew`.
    pub skew: usize,
    /// Bytes before the first sample in the signal file (`format + n`; 0 when absent).
    pub byte_offset: u64,
}

/// A parsed header.
#[derive(Debug, Clone, PartialEq)]
pub struct Header {
    /// Record name.
    pub name: String,
    /// Sampling frequency, Hz.
    pub fs_hz: f64,
    /// Samples per signal, if given.
    pub n_samples: Option<usize>,
    /// Base time and date as written, if given.
    pub start_time: Option<String>,
    /// Signal lines.
    pub signals: Vec<SignalSpec>,
    /// Comment lines (without `#`).
    pub comments: Vec<String>,
}

/// What a signal whose samples do not sum to the header's checksum does to the reading.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum ChecksumPolicy {
    /// A warning naming the file and signal; the samples are used (default: converters such as
    /// the one behind the short-record challenge files write 0 there).
    #[default]
    Warn,
    /// An error naming the file and signal.
    Strict,
}

impl std::str::FromStr for ChecksumPolicy {
    type Err = String;
    fn from_str(s: &str) -> std::result::Result<Self, String> {
        match s {
            "warn" => Ok(ChecksumPolicy::Warn),
            "strict" => Ok(ChecksumPolicy::Strict),
            other => Err(format!("`{other}`: expected `warn` or `strict`")),
        }
    }
}

impl std::fmt::Display for ChecksumPolicy {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(match self {
            ChecksumPolicy::Warn => "warn",
            ChecksumPolicy::Strict => "strict",
        })
    }
}

/// Largest sample count accepted from a header (24 h at 2 kHz); larger values are refused
/// before any allocation.
pub const MAX_SAMPLES: usize = 24 * 3600 * 2000;

fn field<'a>(
    path: &Path,
    line_no: usize,
    toks: &[&'a str],
    i: usize,
    what: &str,
) -> Result<&'a str> {
    toks.get(i)
        .copied()
        .ok_or_else(|| Error::input(path, format!("line {line_no}, field {what}"), "missing"))
}

/// Largest samples-per-frame factor accepted from a header.
pub const MAX_SAMPLES_PER_FRAME: usize = 1024;

/// Split a signal line's format field, `format[xspf][:skew][+offset]` (the header syntax of the
/// WFDB documentation), into (format, samples per frame, skew in frames, byte offset).
fn parse_format(path: &Path, line_no: usize, tok: &str) -> Result<(u32, usize, usize, u64)> {
    let place = format!("line {line_no}, field format");
    let bad = |what: &str| {
        Error::input(
            path,
            place.clone(),
            format!("`{tok}`: {what} (expected format[xsamples-per-frame][:skew][+byte-offset], e.g. 16+24)"),
        )
    };
    // Markers 'x', ':' and '+', each at most once and in this order.
    let split_digits = |s: &str| -> (String, String) {
        let end = s.find(|c: char| !c.is_ascii_digit()).unwrap_or(s.len());
        (s[..end].to_string(), s[end..].to_string())
    };
    let (fmt, mut rest) = split_digits(tok);
    let format: u32 = fmt.parse().map_err(|_| bad("not a format number"))?;
    let mut spf = 1usize;
    let mut skew = 0usize;
    let mut offset = 0u64;
    for (marker, what) in [('x', 0), (':', 1), ('+', 2)] {
        let Some(r) = rest.strip_prefix(marker) else {
            continue;
        };
        let (num, tail) = split_digits(r);
        rest = tail;
        match what {
            0 => {
                spf = num
                    .parse()
                    .map_err(|_| bad("samples per frame is not a whole number"))?;
                if spf == 0 || spf > MAX_SAMPLES_PER_FRAME {
                    return Err(bad(&format!(
                        "samples per frame must be 1..={MAX_SAMPLES_PER_FRAME}"
                    )));
                }
            }
            1 => {
                skew = num.parse().map_err(|_| bad("skew is not a whole number"))?;
                if skew > MAX_SAMPLES {
                    return Err(bad(&format!("skew exceeds {MAX_SAMPLES} frames")));
                }
            }
            _ => {
                offset = num
                    .parse()
                    .map_err(|_| bad("byte offset is not a whole number"))?;
                if offset > u32::MAX as u64 {
                    return Err(bad("byte offset exceeds 4 GiB"));
                }
            }
        }
    }
    if !rest.is_empty() {
        return Err(bad(&format!("unexpected `{rest}`")));
    }
    Ok((format, spf, skew, offset))
}

/// Parse header text. `path` is used in error messages only.
pub fn parse_header(path: &Path, text: &str) -> Result<Header> {
    let mut lines = text
        .lines()
        .enumerate()
        .map(|(i, l)| (i + 1, l.trim_end_matches('\r')));
    let mut comments = Vec::new();
    let (ln, rec_line) = loop {
        match lines.next() {
            Some((_, l)) if l.trim_start().starts_with('#') => {
                comments.push(l.trim_start()[1..].trim().to_string())
            }
            Some((_, l)) if l.trim().is_empty() => {}
            Some(x) => break x,
            None => return Err(Error::input(path, "line 1", "no record line")),
        }
    };
    let toks: Vec<&str> = rec_line.split_whitespace().collect();
    let name_tok = field(path, ln, &toks, 0, "record name")?;
    if name_tok.contains('/') {
        return Err(Error::input(
            path,
            format!("line {ln}, field record name"),
            format!("`{name_tok}` is a multi-segment record; beatfold reads single-segment records only (read each segment's header instead)"),
        ));
    }
    let nsig: usize = field(path, ln, &toks, 1, "number of signals")?
        .parse()
        .map_err(|_| {
            Error::input(
                path,
                format!("line {ln}, field number of signals"),
                "not a whole number",
            )
        })?;
    if nsig > 256 {
        return Err(Error::input(
            path,
            format!("line {ln}, field number of signals"),
            format!("{nsig} signals is more than beatfold accepts (256)"),
        ));
    }
    let fs_hz = match toks.get(2) {
        Some(t) => {
            let f = t.split(['/', '(']).next().unwrap_or("");
            let v: f64 = f.parse().map_err(|_| {
                Error::input(
                    path,
                    format!("line {ln}, field sampling frequency"),
                    format!("`{t}` is not a number"),
                )
            })?;
            if !(v.is_finite() && v > 0.0 && v <= 1.0e6) {
                return Err(Error::input(
                    path,
                    format!("line {ln}, field sampling frequency"),
                    format!("{v} Hz is outside 0 < fs ≤ 1e6"),
                ));
            }
            v
        }
        None => 250.0, // the documented default of the format
    };
    let n_samples = match toks.get(3) {
        Some(t) => {
            let n: usize = t.parse().map_err(|_| {
                Error::input(
                    path,
                    format!("line {ln}, field number of samples"),
                    format!("`{t}` is not a whole number"),
                )
            })?;
            if n > MAX_SAMPLES {
                return Err(Error::input(
                    path,
                    format!("line {ln}, field number of samples"),
                    format!("{n} samples per signal exceeds the limit of {MAX_SAMPLES}"),
                ));
            }
            Some(n)
        }
        None => None,
    };
    let start_time = (toks.len() > 4).then(|| toks[4..].join(" "));
    let mut signals = Vec::with_capacity(nsig);
    while signals.len() < nsig {
        let Some((ln, l)) = lines.next() else {
            return Err(Error::input(
                path,
                "end of header",
                format!("{nsig} signal lines promised, {} found", signals.len()),
            ));
        };
        let lt = l.trim();
        if lt.is_empty() {
            continue;
        }
        if let Some(c) = lt.strip_prefix('#') {
            comments.push(c.trim().to_string());
            continue;
        }
        let t: Vec<&str> = lt.split_whitespace().collect();
        let file = field(path, ln, &t, 0, "file name")?.to_string();
        let fmt_tok = field(path, ln, &t, 1, "format")?;
        let (format, samples_per_frame, skew, byte_offset) = parse_format(path, ln, fmt_tok)?;
        let adc_zero: i32 = match t.get(4) {
            Some(s) => s.parse().map_err(|_| {
                Error::input(
                    path,
                    format!("line {ln}, field ADC zero"),
                    format!("`{s}` is not an integer"),
                )
            })?,
            None => 0,
        };
        let (mut gain, mut baseline, mut units) = (200.0, adc_zero, String::from("mV"));
        if let Some(g) = t.get(2) {
            let (gpart, upart) = match g.split_once('/') {
                Some((a, b)) => (a, Some(b)),
                None => (*g, None),
            };
            let (gnum, bpart) = match gpart.split_once('(') {
                Some((a, b)) => (a, Some(b.trim_end_matches(')'))),
                None => (gpart, None),
            };
            let gv: f64 = gnum.parse().map_err(|_| {
                Error::input(
                    path,
                    format!("line {ln}, field gain"),
                    format!("`{g}` is not a gain"),
                )
            })?;
            if !gv.is_finite() {
                return Err(Error::input(
                    path,
                    format!("line {ln}, field gain"),
                    "not finite",
                ));
            }
            if gv != 0.0 {
                gain = gv;
            }
            if let Some(b) = bpart {
                baseline = b.parse().map_err(|_| {
                    Error::input(
                        path,
                        format!("line {ln}, field baseline"),
                        format!("`{b}` is not an integer"),
                    )
                })?;
            }
            if let Some(u) = upart {
                units = u.to_string();
            }
        }
        let adc_res: u32 = match t.get(3) {
            Some(s) => s.parse().map_err(|_| {
                Error::input(
                    path,
                    format!("line {ln}, field ADC resolution"),
                    format!("`{s}` is not a whole number"),
                )
            })?,
            None => 0,
        };
        let init_value = match t.get(5) {
            Some(s) => Some(s.parse().map_err(|_| {
                Error::input(
                    path,
                    format!("line {ln}, field initial value"),
                    format!("`{s}` is not an integer"),
                )
            })?),
            None => None,
        };
        let checksum = match t.get(6) {
            Some(s) => {
                let v: i64 = s.parse().map_err(|_| {
                    Error::input(
                        path,
                        format!("line {ln}, field checksum"),
                        format!("`{s}` is not an integer"),
                    )
                })?;
                Some(v as i16)
            }
            None => None,
        };
        let description = if t.len() > 8 {
            t[8..].join(" ")
        } else {
            format!("signal{}", signals.len())
        };
        signals.push(SignalSpec {
            file,
            format,
            gain,
            baseline,
            units,
            adc_res,
            adc_zero,
            init_value,
            checksum,
            description,
            samples_per_frame,
            skew,
            byte_offset,
        });
    }
    for (_, l) in lines {
        if let Some(c) = l.trim_start().strip_prefix('#') {
            comments.push(c.trim().to_string());
        }
    }
    Ok(Header {
        name: name_tok.to_string(),
        fs_hz,
        n_samples,
        start_time,
        signals,
        comments,
    })
}

/// Decode interleaved samples of `nsig` signals stored in `format` (16, 32 or 212).
pub fn decode(path: &Path, bytes: &[u8], format: u32, nsig: usize) -> Result<Vec<Vec<i32>>> {
    if nsig == 0 {
        return Ok(Vec::new());
    }
    let flat = decode_flat(path, bytes, format)?;
    let frames = flat.len() / nsig;
    let mut out = vec![Vec::with_capacity(frames); nsig];
    for f in flat.chunks_exact(nsig) {
        for (s, &v) in f.iter().enumerate() {
            out[s].push(v);
        }
    }
    Ok(out)
}

/// Decode a stream of samples stored in `format` (16, 32 or 212), in storage order.
fn decode_flat(path: &Path, bytes: &[u8], format: u32) -> Result<Vec<i32>> {
    Ok(match format {
        16 => bytes
            .chunks_exact(2)
            .map(|c| i16::from_le_bytes([c[0], c[1]]) as i32)
            .collect(),
        32 => bytes
            .chunks_exact(4)
            .map(|c| i32::from_le_bytes([c[0], c[1], c[2], c[3]]))
            .collect(),
        212 => {
            let mut v = Vec::with_capacity(bytes.len() / 3 * 2 + 1);
            let sx = |u: i32| if u & 0x800 != 0 { u - 0x1000 } else { u };
            let mut chunks = bytes.chunks_exact(3);
            for c in &mut chunks {
                let (b0, b1, b2) = (c[0] as i32, c[1] as i32, c[2] as i32);
                v.push(sx(b0 | ((b1 & 0x0f) << 8)));
                v.push(sx(b2 | ((b1 & 0xf0) << 4)));
            }
            let rem = chunks.remainder();
            if rem.len() == 2 {
                v.push(sx(rem[0] as i32 | ((rem[1] as i32 & 0x0f) << 8)));
            }
            v
        }
        other => {
            return Err(Error::input(
                path,
                "format",
                format!(
                    "signal format {other} is not supported (beatfold reads formats 16, 32 and 212)"
                ),
            ))
        }
    })
}

/// Encode interleaved samples of several equally long signals in `format` (16 or 212). Values
/// outside the format's range are an error.
pub fn encode(signals: &[Vec<i32>], format: u32) -> Result<Vec<u8>> {
    let n = signals.first().map_or(0, Vec::len);
    if signals.iter().any(|s| s.len() != n) {
        return Err(Error::Analysis(
            "signals of different lengths cannot share a file".into(),
        ));
    }
    let (lo, hi) = match format {
        16 => (-32768, 32767),
        212 => (-2048, 2047),
        other => {
            return Err(Error::param(
                "format",
                format!("{other}; supported: 16, 212"),
            ))
        }
    };
    let mut flat = Vec::with_capacity(n * signals.len());
    for i in 0..n {
        for s in signals {
            let v = s[i];
            if v < lo || v > hi {
                return Err(Error::Analysis(format!(
                    "sample {v} does not fit format {format} ({lo}..={hi})"
                )));
            }
            flat.push(v);
        }
    }
    let mut out = Vec::new();
    if format == 16 {
        for v in flat {
            out.extend_from_slice(&(v as i16).to_le_bytes());
        }
    } else {
        for pair in flat.chunks(2) {
            let a = pair[0] & 0xfff;
            out.push((a & 0xff) as u8);
            match pair.get(1) {
                Some(&b) => {
                    let b = b & 0xfff;
                    out.push((((a >> 8) & 0x0f) | ((b >> 8) << 4)) as u8);
                    out.push((b & 0xff) as u8);
                }
                None => out.push(((a >> 8) & 0x0f) as u8),
            }
        }
    }
    Ok(out)
}

/// 16-bit checksum of samples as defined for the header (sum, wrapping).
pub fn checksum(samples: &[i32]) -> i16 {
    samples
        .iter()
        .fold(0i16, |acc, &v| acc.wrapping_add(v as i16))
}

/// Read a record from its header path (`.hea`); signal files are looked up beside it. The
/// annotation file `<record>.<ann_ext>` is attached when `ann_ext` is given and exists.
///
/// A signal file shorter than the header promises is refused from its size alone, before it
/// is read.
///
/// A checksum that does not match is a warning ([`ChecksumPolicy::Warn`]); use
/// [`read_record_checked`] to choose.
pub fn read_record(hea: &Path, ann_ext: Option<&str>) -> Result<(Record, Vec<String>)> {
    read_record_checked(hea, ann_ext, ChecksumPolicy::default())
}

/// [`read_record`] with the handling of checksum mismatches chosen by `policy`.
pub fn read_record_checked(
    hea: &Path,
    ann_ext: Option<&str>,
    policy: ChecksumPolicy,
) -> Result<(Record, Vec<String>)> {
    let text = super::read_text(hea)?;
    let h = parse_header(hea, &text)?;
    let dir = hea.parent().unwrap_or_else(|| Path::new("."));
    let mut load = |file: &str, need: usize| -> Result<(PathBuf, Vec<u8>)> {
        let fpath = dir.join(file);
        let have = std::fs::metadata(&fpath)
            .map_err(|e| {
                Error::input(
                    hea,
                    format!("signal file `{file}`"),
                    format!("cannot open {}: {e}", fpath.display()),
                )
            })?
            .len();
        if have < need as u64 {
            return Err(short_file(&fpath, need, have as usize, h.n_samples));
        }
        let bytes = std::fs::read(&fpath).map_err(|e| {
            Error::input(
                hea,
                format!("signal file `{file}`"),
                format!("cannot read {}: {e}", fpath.display()),
            )
        })?;
        Ok((fpath, bytes))
    };
    let (mut rec, mut warnings) = assemble(hea, &h, &mut load, policy)?;
    if let Some(ext) = ann_ext {
        let ap = dir.join(format!("{}.{ext}", h.name));
        if ap.exists() {
            let bytes = std::fs::read(&ap).map_err(|e| Error::io(&ap, e))?;
            let anns = parse_annotations(&ap, &bytes)?;
            rec.annotations = to_annotations(&anns, h.fs_hz, rec.n_samples());
        } else {
            warnings.push(format!(
                "{}: no annotation file `{}`",
                hea.display(),
                ap.display()
            ));
        }
    }
    Ok((rec, warnings))
}

/// [`read_record`] on bytes already in memory: the header text, the signal files by the names
/// the header gives, and optionally an annotation file (its path for messages, its bytes).
/// `hea` names the header in errors; signal files are named as if beside it.
pub fn record_from_bytes(
    hea: &Path,
    header: &[u8],
    signal_files: &[(&str, &[u8])],
    annotations: Option<(&Path, &[u8])>,
) -> Result<(Record, Vec<String>)> {
    let text = super::text_from_bytes(hea, header)?;
    let h = parse_header(hea, text)?;
    let dir = hea.parent().unwrap_or_else(|| Path::new("."));
    let mut load = |file: &str, need: usize| -> Result<(PathBuf, Vec<u8>)> {
        let fpath = dir.join(file);
        let Some((_, b)) = signal_files.iter().find(|(n, _)| *n == file) else {
            return Err(Error::input(
                hea,
                format!("signal file `{file}`"),
                format!("cannot open {}: not found", fpath.display()),
            ));
        };
        if b.len() < need {
            return Err(short_file(&fpath, need, b.len(), h.n_samples));
        }
        Ok((fpath, b.to_vec()))
    };
    let (mut rec, warnings) = assemble(hea, &h, &mut load, ChecksumPolicy::default())?;
    if let Some((ap, bytes)) = annotations {
        let anns = parse_annotations(ap, bytes)?;
        rec.annotations = to_annotations(&anns, h.fs_hz, rec.n_samples());
    }
    Ok((rec, warnings))
}

fn short_file(fpath: &Path, need: usize, have: usize, n: Option<usize>) -> Error {
    Error::input(
        fpath,
        format!("byte {have}"),
        format!(
            "file ends early: the header promises {} samples per signal ({need} bytes), the file has {have} bytes; check the header's sample count or re-copy the file",
            n.unwrap_or(0)
        ),
    )
}

/// Bytes a signal file must hold for `n` samples of each of `nsig` signals in `format`.
fn bytes_needed(format: u32, n: usize, nsig: usize) -> usize {
    // n ≤ MAX_SAMPLES and nsig ≤ 256, so these products fit in 64 bits; saturate anyway.
    let values = n.saturating_mul(nsig);
    match format {
        16 => values.saturating_mul(2),
        32 => values.saturating_mul(4),
        212 => values.saturating_mul(3).div_ceil(2),
        _ => 0,
    }
}

/// Gives a signal file's path (for messages) and bytes from its name and the bytes it must hold.
type SignalLoader<'a> = dyn FnMut(&str, usize) -> Result<(PathBuf, Vec<u8>)> + 'a;

/// Invalid-sample marker of a format: its most negative value.
fn invalid_value(format: u32) -> i32 {
    match format {
        212 => -2048,
        32 => i32::MIN,
        _ => -32768,
    }
}

/// Decode the signal files of a parsed header into a record. `load(file, bytes_needed)` returns
/// a signal file's path (for messages) and bytes, refusing files shorter than needed.
fn assemble(
    hea: &Path,
    h: &Header,
    load: &mut SignalLoader<'_>,
    policy: ChecksumPolicy,
) -> Result<(Record, Vec<String>)> {
    if h.signals.is_empty() {
        return Err(Error::input(hea, "line 1", "record has no signals"));
    }
    // Group signals by file, in header order.
    let mut groups: BTreeMap<String, Vec<usize>> = BTreeMap::new();
    for (i, s) in h.signals.iter().enumerate() {
        groups.entry(s.file.clone()).or_default().push(i);
        if let Some(n) = h.n_samples {
            if n.saturating_mul(s.samples_per_frame) > MAX_SAMPLES {
                return Err(Error::input(
                    hea,
                    format!("signal {i} ({}), field samples per frame", s.description),
                    format!(
                        "{n} frames of {} samples exceed the limit of {MAX_SAMPLES} samples per signal",
                        s.samples_per_frame
                    ),
                ));
            }
        }
    }
    let mut warnings = Vec::new();
    let mut adu: Vec<Vec<i32>> = vec![Vec::new(); h.signals.len()];
    for (file, idx) in &groups {
        let first = &h.signals[idx[0]];
        let fmt = first.format;
        if idx.iter().any(|&i| h.signals[i].format != fmt) {
            return Err(Error::input(
                hea,
                format!("signals in `{file}`"),
                "signals sharing a file must share a format",
            ));
        }
        if idx
            .iter()
            .any(|&i| h.signals[i].byte_offset != first.byte_offset)
        {
            return Err(Error::input(
                hea,
                format!("signals in `{file}`, field format"),
                "signals sharing a file must share a byte offset",
            ));
        }
        if file.contains("..") || file.starts_with('/') || file == "-" {
            return Err(Error::input(
                hea,
                format!("signal file `{file}`"),
                "signal file must be a plain name beside the header",
            ));
        }
        if !matches!(fmt, 16 | 212 | 32) {
            return Err(Error::input(
                hea,
                format!("signal file `{file}`, field format"),
                format!(
                    "signal format {fmt} is not supported (beatfold reads formats 16, 32 and 212)"
                ),
            ));
        }
        // Values per frame in this file.
        let frame: usize = idx.iter().map(|&i| h.signals[i].samples_per_frame).sum();
        let need_data = h
            .n_samples
            .map_or(0, |n| bytes_needed(fmt, n.saturating_mul(frame), 1));
        let is_mat = file.to_ascii_lowercase().ends_with(".mat");
        let offset = usize::try_from(first.byte_offset).unwrap_or(usize::MAX);
        let (fpath, bytes) = load(file, offset.saturating_add(need_data))?;
        let (start, end) = if is_mat {
            let m = super::matv4::parse_header(&fpath, &bytes)?;
            let (start, end) =
                mat_data_range(&fpath, &m, fmt, frame, offset, h.n_samples, bytes.len())?;
            if offset == 0 {
                warnings.push(format!(
                    "{}: signal file `{file}` is a MATLAB v4 matrix but the header gives no byte offset; samples are read from the matrix data at byte {start}",
                    hea.display()
                ));
            }
            (start, end)
        } else {
            if offset > bytes.len() {
                return Err(Error::input(
                    &fpath,
                    format!("byte {offset}"),
                    format!(
                        "the header's byte offset {offset} is past the end of the file ({} bytes)",
                        bytes.len()
                    ),
                ));
            }
            (offset, bytes.len())
        };
        let flat = decode_flat(&fpath, &bytes[start..end], fmt)?;
        let mut per: Vec<Vec<i32>> = idx
            .iter()
            .map(|&i| Vec::with_capacity(flat.len() / frame * h.signals[i].samples_per_frame))
            .collect();
        for f in flat.chunks_exact(frame) {
            let mut o = 0;
            for (k, &i) in idx.iter().enumerate() {
                let spf = h.signals[i].samples_per_frame;
                per[k].extend_from_slice(&f[o..o + spf]);
                o += spf;
            }
        }
        for (k, &i) in idx.iter().enumerate() {
            adu[i] = std::mem::take(&mut per[k]);
        }
    }
    // Frames per signal.
    let n = h.n_samples.unwrap_or_else(|| {
        h.signals
            .iter()
            .zip(&adu)
            .map(|(s, a)| (a.len() / s.samples_per_frame).saturating_sub(s.skew))
            .min()
            .unwrap_or(0)
    });
    let mut leads = Vec::with_capacity(h.signals.len());
    for (i, s) in h.signals.iter().enumerate() {
        let spf = s.samples_per_frame;
        let want = n * spf;
        let a = &adu[i];
        let from = s.skew.saturating_mul(spf).min(a.len());
        let avail = &a[from..a.len().min(from.saturating_add(want))];
        let mut padded = 0;
        if avail.len() < want {
            if s.skew == 0 {
                return Err(Error::input(
                    hea,
                    format!("signal {i} ({})", s.description),
                    format!("{} samples found, {want} expected", avail.len()),
                ));
            }
            padded = want - avail.len();
            warnings.push(format!(
                "{}: signal {i} ({}): a skew of {} frames leaves the last {padded} samples without data; they are marked missing",
                hea.display(),
                s.description,
                s.skew
            ));
        }
        if let (Some(iv), Some(&first)) = (s.init_value, avail.first()) {
            if iv != first {
                // Like the checksum, the initial value is a converter-written consistency
                // field; the policy decides whether a mismatch stops the reading.
                let place = format!("signal {i} ({}), field initial value", s.description);
                match policy {
                    ChecksumPolicy::Strict => {
                        return Err(Error::input(hea, place, format!("header says {iv}, signal file starts with {first} (checksum policy `strict`)")));
                    }
                    ChecksumPolicy::Warn => warnings.push(format!(
                        "{}: {place}: header says {iv}, signal file starts with {first}; reading goes on (checksum policy `warn`; `strict` makes this an error)",
                        hea.display()
                    )),
                }
            }
        }
        if let Some(cs) = s.checksum {
            let got = checksum(avail);
            if got != cs {
                let place = format!("signal {i} ({}), field checksum", s.description);
                match policy {
                    ChecksumPolicy::Strict => {
                        return Err(Error::input(hea, place, format!("header says {cs}, samples sum to {got}: the signal file does not match its header (checksum policy `strict`)")));
                    }
                    ChecksumPolicy::Warn => warnings.push(format!(
                        "{}: {place}: header says {cs}, samples sum to {got}; reading goes on (checksum policy `warn`; `strict` makes this an error)",
                        hea.display()
                    )),
                }
            }
        }
        if s.gain <= 0.0 {
            warnings.push(format!(
                "{}: signal {i}: gain {} is not positive",
                hea.display(),
                s.gain
            ));
        }
        let base = s.baseline as f64;
        let g = s.gain;
        let bad = invalid_value(s.format);
        let samples: Vec<f64> = avail
            .iter()
            .chain(std::iter::repeat_n(&bad, padded))
            .map(|&v| {
                // WFDB marks invalid samples with the format's most negative value.
                if v == bad {
                    f64::NAN
                } else {
                    (v as f64 - base) / g
                }
            })
            .collect();
        leads.push(Lead {
            name: s.description.clone(),
            unit: s.units.clone(),
            samples,
        });
    }
    // One rate per record: all signals at the sample rate when they share a samples-per-frame
    // factor, otherwise at the frame rate with oversampled signals averaged over each frame.
    let spf0 = h.signals[0].samples_per_frame;
    let fs_hz = if h.signals.iter().all(|s| s.samples_per_frame == spf0) {
        h.fs_hz * spf0 as f64
    } else {
        let list: Vec<String> = h
            .signals
            .iter()
            .map(|s| s.samples_per_frame.to_string())
            .collect();
        warnings.push(format!(
            "{}: signals have different samples per frame ({}); all are read at the frame rate {} Hz, oversampled signals averaged over each frame",
            hea.display(),
            list.join(", "),
            h.fs_hz
        ));
        for (l, s) in leads.iter_mut().zip(&h.signals) {
            if s.samples_per_frame > 1 {
                l.samples = frame_means(&l.samples, s.samples_per_frame);
            }
        }
        h.fs_hz
    };
    let rec = Record {
        name: h.name.clone(),
        fs_hz,
        leads,
        start_time: h.start_time.clone(),
        annotations: Annotations::default(),
    };
    Ok((rec, warnings))
}

/// Mean of each run of `k` samples, skipping missing ones (NaN when all are missing).
fn frame_means(x: &[f64], k: usize) -> Vec<f64> {
    x.chunks(k)
        .map(|c| {
            let (sum, n) = c
                .iter()
                .filter(|v| v.is_finite())
                .fold((0.0, 0usize), |(s, n), v| (s + v, n + 1));
            if n == 0 {
                f64::NAN
            } else {
                sum / n as f64
            }
        })
        .collect()
}

/// Byte range of the samples in a MATLAB v4 signal file, after checking the matrix against the
/// header: byte order and element type match the format, one row per value of a frame, enough
/// columns, and the header's byte offset (if any) at the matrix data.
fn mat_data_range(
    fpath: &Path,
    m: &super::matv4::MatV4Header,
    fmt: u32,
    frame: usize,
    offset: usize,
    n_samples: Option<usize>,
    file_len: usize,
) -> Result<(usize, usize)> {
    if m.big_endian {
        return Err(Error::input(
            fpath,
            "MAT header, field type",
            format!("the matrix is stored big-endian; the header's format {fmt} is little-endian"),
        ));
    }
    let want_p = match fmt {
        16 => 3,
        32 => 2,
        _ => {
            return Err(Error::input(
                fpath,
                "MAT header",
                format!("format {fmt} cannot be stored in a MATLAB v4 matrix (use 16 or 32)"),
            ))
        }
    };
    if m.precision != want_p {
        return Err(Error::input(
            fpath,
            "MAT header, field type",
            format!(
                "the matrix holds {}; the header's format {fmt} needs {}-bit integers",
                m.precision_name(),
                fmt
            ),
        ));
    }
    if m.rows as usize != frame {
        return Err(Error::input(
            fpath,
            "MAT header, field mrows",
            format!(
                "the matrix has {} rows; the header describes {frame} values per frame in this file",
                m.rows
            ),
        ));
    }
    if let Some(n) = n_samples {
        if (m.cols as usize) < n {
            return Err(Error::input(
                fpath,
                "MAT header, field ncols",
                format!(
                    "the matrix has {} columns (frames); the header promises {n} samples per signal",
                    m.cols
                ),
            ));
        }
    }
    if offset != 0 && offset != m.data_start {
        return Err(Error::input(
            fpath,
            "byte offset",
            format!(
                "the header's byte offset {offset} does not match the start of the matrix data (byte {})",
                m.data_start
            ),
        ));
    }
    let end = (m.data_start as u64).saturating_add(m.data_len());
    if end > file_len as u64 {
        return Err(Error::input(
            fpath,
            format!("byte {file_len}"),
            format!(
                "file ends early: a {}×{} matrix of {} needs {end} bytes, the file has {file_len}",
                m.rows,
                m.cols,
                m.precision_name()
            ),
        ));
    }
    Ok((m.data_start, end as usize))
}

/// One decoded annotation of an MIT-format annotation file.
#[derive(Debug, Clone, PartialEq)]
pub struct MitAnnotation {
    /// Sample index.
    pub sample: u64,
    /// Annotation code (1..=49).
    pub code: u8,
    /// Subtype.
    pub subtype: i32,
    /// Channel.
    pub chan: i32,
    /// Number field.
    pub num: i32,
    /// Auxiliary text (e.g. a rhythm label such as `(AFIB`), if any.
    pub aux: Option<String>,
}

/// Mnemonic of an MIT annotation code (the standard code table of the annotation format; codes
/// not in the table map to `?`).
pub fn code_mnemonic(code: u8) -> char {
    // Index = code; codes 0 (not a QRS), 15 and 17 (unused) are spaces. Common practice: the
    // code table of the MIT annotation format, recalled from memory and checked against the
    // beat and PVC counts of the open annotated records (scripts/validate-mitdb).
    const TABLE: &[u8; 42] = b" NLRaVFJASEj/Q~ | sT*D\"=pB^t+u?![]en@xf()r";
    TABLE.get(code as usize).map_or('?', |&b| b as char)
}

/// True for the codes counted as beats (N L R B A a J S V r F e j n E / f Q ?).
pub fn is_beat(mnemonic: char) -> bool {
    "NLRBAaJSVrFejnE/fQ?".contains(mnemonic)
}

/// Parse an MIT-format annotation file.
pub fn parse_annotations(path: &Path, bytes: &[u8]) -> Result<Vec<MitAnnotation>> {
    let mut out: Vec<MitAnnotation> = Vec::new();
    let mut t: i64 = 0;
    let mut i = 0usize;
    let word = |i: usize| -> Option<u16> {
        bytes
            .get(i..i + 2)
            .map(|b| u16::from_le_bytes([b[0], b[1]]))
    };
    let (mut sub, mut chan, mut num) = (0i32, 0i32, 0i32);
    loop {
        let off = i;
        let Some(w) = word(i) else {
            return Err(Error::input(
                path,
                format!("byte offset {off}"),
                "file ends without the end-of-annotations word (truncated?)",
            ));
        };
        i += 2;
        if w == 0 {
            break;
        }
        let code = (w >> 10) as u8;
        let val = (w & 0x3ff) as i64;
        match code {
            59 => {
                let (Some(hi), Some(lo)) = (word(i), word(i + 2)) else {
                    return Err(Error::input(
                        path,
                        format!("byte offset {off}"),
                        "SKIP word without its 32-bit interval (file truncated)",
                    ));
                };
                i += 4;
                t += (((hi as u32) << 16) | lo as u32) as i32 as i64;
            }
            60 => num = val as i32,
            61 => sub = val as i32,
            62 => chan = val as i32,
            63 => {
                let len = val as usize;
                let Some(b) = bytes.get(i..i + len) else {
                    return Err(Error::input(
                        path,
                        format!("byte offset {off}"),
                        format!("AUX string of {len} bytes runs past the end of the file"),
                    ));
                };
                let s: String = String::from_utf8_lossy(b)
                    .trim_end_matches('\0')
                    .to_string();
                i += len + (len & 1);
                match out.last_mut() {
                    Some(last) => last.aux = Some(s),
                    None => {
                        return Err(Error::input(
                            path,
                            format!("byte offset {off}"),
                            "AUX string before any annotation",
                        ))
                    }
                }
            }
            c => {
                t += val;
                if t < 0 {
                    return Err(Error::input(
                        path,
                        format!("byte offset {off}"),
                        "annotation time before the record start",
                    ));
                }
                // NUM, SUB and CHN apply to this annotation and then persist (num, chan) or reset
                // (subtype), as in the format's definition.
                out.push(MitAnnotation {
                    sample: t as u64,
                    code: c,
                    subtype: sub,
                    chan,
                    num,
                    aux: None,
                });
                sub = 0;
            }
        }
    }
    Ok(out)
}

/// Encode annotations in MIT format (times must not decrease). Used for round-trip tests and
/// for writing excerpts.
pub fn encode_annotations(anns: &[MitAnnotation]) -> Result<Vec<u8>> {
    let mut out = Vec::new();
    let mut t: u64 = 0;
    let push = |out: &mut Vec<u8>, w: u16| out.extend_from_slice(&w.to_le_bytes());
    for a in anns {
        if a.sample < t {
            return Err(Error::Analysis("annotations out of time order".into()));
        }
        let mut d = a.sample - t;
        if d > 1023 {
            let d32 = i32::try_from(d)
                .map_err(|_| Error::Analysis("annotation interval too large".into()))?
                as u32;
            push(&mut out, 59 << 10);
            push(&mut out, (d32 >> 16) as u16);
            push(&mut out, (d32 & 0xffff) as u16);
            d = 0;
        }
        if a.subtype != 0 {
            push(&mut out, (61 << 10) | (a.subtype as u16 & 0x3ff));
        }
        push(&mut out, ((a.code as u16) << 10) | d as u16);
        if let Some(s) = &a.aux {
            let b = s.as_bytes();
            push(&mut out, (63 << 10) | (b.len() as u16 & 0x3ff));
            out.extend_from_slice(b);
            if b.len() % 2 == 1 {
                out.push(0);
            }
        }
        t = a.sample;
    }
    push(&mut out, 0);
    Ok(out)
}

/// Convert MIT annotations to beatfold's: beats (beat codes only) and rhythm intervals from
/// rhythm-change annotations (`+` with an AUX label such as `(AFIB`), each running to the next
/// rhythm change or the end of the record (`n_samples`).
pub fn to_annotations(anns: &[MitAnnotation], fs_hz: f64, n_samples: usize) -> Annotations {
    let mut out = Annotations::default();
    let mut changes: Vec<(f64, String)> = Vec::new();
    for a in anns {
        let m = code_mnemonic(a.code);
        if is_beat(m) {
            out.beats.push(BeatAnnotation {
                sample: a.sample as usize,
                code: m,
            });
        } else if m == '+' {
            if let Some(label) = a.aux.as_deref().and_then(|s| s.strip_prefix('(')) {
                changes.push((a.sample as f64 / fs_hz, label.to_string()));
            }
        }
    }
    out.rhythms = crate::record::rhythm_intervals(&changes, n_samples as f64 / fs_hz);
    out
}

/// Write a record in PhysioNet format (header plus one signal file in `format` 16 or 212),
/// quantising each lead with `gain` ADC units per physical unit and zero baseline.
pub fn write_record(rec: &Record, dir: &Path, format: u32, gain: f64) -> Result<()> {
    let adu: Vec<Vec<i32>> = rec
        .leads
        .iter()
        .map(|l| {
            l.samples
                .iter()
                .map(|v| (v * gain).round() as i32)
                .collect()
        })
        .collect();
    let bytes = encode(&adu, format)?;
    let dat = format!("{}.dat", rec.name);
    let mut hea = format!(
        "{} {} {} {}\n",
        rec.name,
        rec.leads.len(),
        rec.fs_hz,
        rec.n_samples()
    );
    let res = if format == 212 { 12 } else { 16 };
    for (l, a) in rec.leads.iter().zip(&adu) {
        hea.push_str(&format!(
            "{dat} {format} {gain}(0)/{} {res} 0 {} {} 0 {}\n",
            l.unit,
            a.first().copied().unwrap_or(0),
            checksum(a),
            l.name
        ));
    }
    super::write_atomic(&dir.join(&dat), &bytes)?;
    super::write_atomic(&dir.join(format!("{}.hea", rec.name)), hea.as_bytes())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn format_212_packs_the_reference_pairs() {
        // Source: docs/references.md §10 [C] and the format 212 definition in data/mitdb/SOURCE.md:
        // (995, 1011) → e3 33 f3; (−1, 1000) → ff 3f e8.
        assert_eq!(
            encode(&[vec![995], vec![1011]], 212).unwrap(),
            vec![0xe3, 0x33, 0xf3]
        );
        assert_eq!(
            encode(&[vec![-1], vec![1000]], 212).unwrap(),
            vec![0xff, 0x3f, 0xe8]
        );
        let d = decode(Path::new("x"), &[0xff, 0x3f, 0xe8], 212, 2).unwrap();
        assert_eq!(d, vec![vec![-1], vec![1000]]);
    }

    #[test]
    fn header_fields_and_multisegment_refusal() {
        let h = parse_header(Path::new("100.hea"), "100 2 360 650000\r\n100.dat 212 200 11 1024 995 -22131 0 MLII\r\n100.dat 212 200 11 1024 1011 20052 0 V5\r\n# 69 M\r\n").unwrap();
        assert_eq!(h.signals.len(), 2);
        assert_eq!(h.signals[1].description, "V5");
        assert_eq!(h.signals[0].baseline, 1024);
        assert_eq!(h.signals[0].checksum, Some(-22131));
        assert_eq!(h.n_samples, Some(650000));
        assert_eq!(h.comments, vec!["69 M".to_string()]);
        let err = parse_header(Path::new("m.hea"), "m/3 2 360 100\n")
            .unwrap_err()
            .to_string();
        assert!(err.contains("multi-segment"), "{err}");
        let err = parse_header(Path::new("b.hea"), "b 2 360 100\nb.dat 212 200 11 1024\n")
            .unwrap_err()
            .to_string();
        assert!(err.contains("2 signal lines promised, 1 found"), "{err}");
        let err = parse_header(Path::new("c.hea"), "c 1 abc 100\n")
            .unwrap_err()
            .to_string();
        assert!(err.contains("sampling frequency"), "{err}");
        let err = parse_header(Path::new("d.hea"), "d 1 360 99999999999999\n")
            .unwrap_err()
            .to_string();
        assert!(err.contains("number of samples"), "{err}");
    }

    #[test]
    fn round_trip_through_both_formats() {
        let rec = Record {
            name: "rt".into(),
            fs_hz: 360.0,
            leads: vec![
                Lead {
                    name: "a".into(),
                    unit: "mV".into(),
                    samples: (0..1001).map(|i| ((i as f64) * 0.05).sin() * 2.0).collect(),
                },
                Lead {
                    name: "b".into(),
                    unit: "mV".into(),
                    samples: (0..1001).map(|i| ((i as f64) * 0.03).cos()).collect(),
                },
            ],
            start_time: None,
            annotations: Annotations::default(),
        };
        for fmt in [16u32, 212] {
            let dir = tempfile::tempdir().unwrap();
            write_record(&rec, dir.path(), fmt, 200.0).unwrap();
            let (back, _) = read_record(&dir.path().join("rt.hea"), None).unwrap();
            assert_eq!(back.n_samples(), 1001);
            for (l0, l1) in rec.leads.iter().zip(&back.leads) {
                for (a, b) in l0.samples.iter().zip(&l1.samples) {
                    // Quantisation at 200 ADC units per mV: error ≤ half a unit.
                    assert!((a - b).abs() <= 0.5 / 200.0 + 1e-12);
                    assert_eq!((b * 200.0).round(), (a * 200.0).round());
                }
            }
        }
    }

    #[test]
    fn corrupted_signal_file_fails_its_checksum() {
        let rec = Record {
            name: "cs".into(),
            fs_hz: 100.0,
            leads: vec![Lead {
                name: "a".into(),
                unit: "mV".into(),
                samples: vec![0.1, 0.2, 0.3, 0.4],
            }],
            start_time: None,
            annotations: Annotations::default(),
        };
        let dir = tempfile::tempdir().unwrap();
        write_record(&rec, dir.path(), 16, 200.0).unwrap();
        let dat = dir.path().join("cs.dat");
        let mut b = std::fs::read(&dat).unwrap();
        b[4] ^= 0x01;
        std::fs::write(&dat, &b).unwrap();
        // Default: a warning naming the file and field, and the samples are read.
        let (back, warnings) = read_record(&dir.path().join("cs.hea"), None).unwrap();
        assert_eq!(back.n_samples(), 4);
        assert!(
            warnings
                .iter()
                .any(|w| w.contains("cs.hea") && w.contains("field checksum")),
            "{warnings:?}"
        );
        // Strict: an error naming the file and field.
        let err = read_record_checked(&dir.path().join("cs.hea"), None, ChecksumPolicy::Strict)
            .unwrap_err()
            .to_string();
        assert!(
            err.contains("cs.hea") && err.contains("field checksum"),
            "{err}"
        );
        std::fs::write(&dat, &b[..5]).unwrap();
        let err = read_record(&dir.path().join("cs.hea"), None)
            .unwrap_err()
            .to_string();
        assert!(err.contains("ends early"), "{err}");
    }

    #[test]
    fn annotations_round_trip_with_skip_and_aux() {
        let anns = vec![
            MitAnnotation {
                sample: 18,
                code: 28,
                subtype: 0,
                chan: 0,
                num: 0,
                aux: Some("(N".into()),
            },
            MitAnnotation {
                sample: 77,
                code: 1,
                subtype: 0,
                chan: 0,
                num: 0,
                aux: None,
            },
            MitAnnotation {
                sample: 5000,
                code: 5,
                subtype: 0,
                chan: 0,
                num: 0,
                aux: None,
            },
            MitAnnotation {
                sample: 5100,
                code: 28,
                subtype: 0,
                chan: 0,
                num: 0,
                aux: Some("(AFIB".into()),
            },
            MitAnnotation {
                sample: 5400,
                code: 1,
                subtype: 0,
                chan: 0,
                num: 0,
                aux: None,
            },
        ];
        let bytes = encode_annotations(&anns).unwrap();
        let back = parse_annotations(Path::new("x.atr"), &bytes).unwrap();
        assert_eq!(back, anns);
        let a = to_annotations(&back, 100.0, 6000);
        let codes: String = a.beats.iter().map(|b| b.code).collect();
        assert_eq!(codes, "NVN");
        assert_eq!(a.rhythms.len(), 2);
        assert_eq!(a.rhythms[1].label, "AFIB");
        assert!(
            (a.rhythms[1].start_s - 51.0).abs() < 1e-12
                && (a.rhythms[1].end_s - 60.0).abs() < 1e-12
        );
        // Truncated AUX is an error naming the byte offset, not a panic.
        for cut in [5, 7, bytes.len() - 2] {
            let err = parse_annotations(Path::new("x.atr"), &bytes[..cut])
                .unwrap_err()
                .to_string();
            assert!(err.contains("byte offset"), "{err}");
        }
    }

    fn excerpt(name: &str) -> std::path::PathBuf {
        Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("tests/data/mitdb-excerpt")
            .join(name)
    }

    #[test]
    fn open_record_excerpt_decodes_with_its_annotations() {
        // Source: MIT-BIH Arrhythmia Database record 100 (PhysioNet, ODC-By 1.0), first 10 s, cut
        // by scripts/make_mitdb_excerpt.py. The initial values 995 and 1011 are the release
        // header's; gain 200 and ADC zero 1024 give (995 − 1024)/200 = −0.145 mV.
        let (rec, warnings) = read_record(&excerpt("100x.hea"), Some("atr")).unwrap();
        assert!(warnings.is_empty(), "{warnings:?}");
        assert_eq!(rec.fs_hz, 360.0);
        assert_eq!(rec.n_samples(), 3600);
        let names: Vec<&str> = rec.leads.iter().map(|l| l.name.as_str()).collect();
        assert_eq!(names, ["MLII", "V5"]);
        assert!((rec.leads[0].samples[0] - (-0.145)).abs() < 1e-12);
        assert!((rec.leads[1].samples[0] - (-0.065)).abs() < 1e-12);
        // The release's annotations for these 10 s: 13 beats, the eighth an atrial premature
        // beat (code A), the first at sample 77, under a normal-rhythm label from sample 18.
        let codes: String = rec.annotations.beats.iter().map(|b| b.code).collect();
        assert_eq!(codes, "NNNNNNNANNNNN");
        assert_eq!(rec.annotations.beats[0].sample, 77);
        assert_eq!(rec.annotations.rhythms.len(), 1);
        assert_eq!(rec.annotations.rhythms[0].label, "N");
        assert!((rec.annotations.rhythms[0].start_s - 18.0 / 360.0).abs() < 1e-12);
    }

    #[test]
    fn open_record_excerpt_matches_an_independent_decoding() {
        // Source: scipy.misc.electrocardiogram() of SciPy 1.11.4 (general-purpose reference
        // library), documented as record 208 signal 0 from 19:34.5 in (adu − 1024)/200 mV; fixture
        // written by scripts/make_mitdb_excerpt.py. Both are exact multiples of 1/200 mV.
        let (rec, _) = read_record(&excerpt("208x.hea"), None).unwrap();
        let text = std::fs::read_to_string(excerpt("scipy_ecg_208.json")).unwrap();
        let j: serde_json::Value = serde_json::from_str(&text).unwrap();
        let reference: Vec<f64> = j["mv"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_f64().unwrap())
            .collect();
        assert_eq!(reference.len(), 3600);
        for (i, (a, b)) in rec.leads[0].samples.iter().zip(&reference).enumerate() {
            assert!((a - b).abs() < 1e-9, "sample {i}: {a} vs {b}");
        }
    }

    #[test]
    fn format_field_syntax_and_its_errors() {
        // Syntax: format[xspf][:skew][+offset], WFDB header documentation (Moody, WFDB
        // Programmer's Guide, header(5)).
        let p = Path::new("f.hea");
        assert_eq!(parse_format(p, 2, "16+24").unwrap(), (16, 1, 0, 24));
        assert_eq!(parse_format(p, 2, "212x2:3+512").unwrap(), (212, 2, 3, 512));
        assert_eq!(parse_format(p, 2, "16:5").unwrap(), (16, 1, 5, 0));
        for bad in ["16+", "16x0", "16+24x2", "16y", "x2", "16:-1"] {
            let e = parse_format(p, 2, bad).unwrap_err().to_string();
            assert!(
                e.contains("f.hea") && e.contains("field format"),
                "{bad}: {e}"
            );
        }
    }

    #[test]
    fn skew_offset_and_samples_per_frame_are_applied() {
        // Two signals in one format-16 file after 6 bytes of padding: signal a with two samples
        // per frame, signal b one; b is skewed by one frame. Frames: (a0 a1 b?) ...
        let vals: Vec<i16> = vec![10, 11, 99, 20, 21, 200, 30, 31, 300, 40, 41, 400];
        let mut bytes = vec![0u8; 6];
        for v in &vals {
            bytes.extend_from_slice(&v.to_le_bytes());
        }
        let hea = "s 2 100 4\ns.dat 16x2+6 1 16 0\ns.dat 16:1+6 1 16 0\n";
        let (rec, w) = record_from_bytes(
            Path::new("s.hea"),
            hea.as_bytes(),
            &[("s.dat", &bytes)],
            None,
        )
        .unwrap();
        // Different samples per frame: read at the frame rate, a averaged over each frame.
        assert_eq!(rec.fs_hz, 100.0);
        assert_eq!(rec.leads[0].samples, vec![10.5, 20.5, 30.5, 40.5]);
        assert_eq!(&rec.leads[1].samples[..3], &[200.0, 300.0, 400.0]);
        assert!(rec.leads[1].samples[3].is_nan());
        assert!(w.iter().any(|m| m.contains("skew")), "{w:?}");
        assert!(w.iter().any(|m| m.contains("frame rate")), "{w:?}");
        // Equal factors: the sample rate is the frame rate times the factor.
        let hea = "s 1 100 2\ns.dat 16x2+6 1 16 0\n";
        let (rec, _) = record_from_bytes(
            Path::new("s.hea"),
            hea.as_bytes(),
            &[("s.dat", &bytes[..14])],
            None,
        )
        .unwrap();
        assert_eq!(rec.fs_hz, 200.0);
        assert_eq!(rec.leads[0].samples, vec![10.0, 11.0, 99.0, 20.0]);
        let e = record_from_bytes(
            Path::new("s.hea"),
            "s 1 100\ns.dat 16+999 1 16 0\n".as_bytes(),
            &[("s.dat", &bytes)],
            None,
        )
        .unwrap_err()
        .to_string();
        assert!(
            e.contains("ends early") || e.contains("past the end"),
            "{e}"
        );
    }

    fn cinc(name: &str) -> std::path::PathBuf {
        Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("tests/data/cinc2017-excerpt")
            .join(name)
    }

    #[test]
    fn short_challenge_records_match_an_independent_matlab_decoding() {
        // Source: PhysioNet/CinC Challenge 2017 validation records (ODC-By 1.0), copied by
        // scripts/make_cinc_excerpt.py with the matrix `val` as decoded by scipy.io.loadmat
        // (SciPy 1.11.4). Gain 1000 ADC units per mV, baseline 0: mV = adu / 1000.
        let text = std::fs::read_to_string(cinc("scipy_loadmat.json")).unwrap();
        let j: serde_json::Value = serde_json::from_str(&text).unwrap();
        for (name, n) in [
            ("A00093", 3002),
            ("A00405", 3020),
            ("A00139", 3760),
            ("A03549", 3064),
        ] {
            let (rec, warnings) = read_record(&cinc(&format!("{name}.hea")), None).unwrap();
            assert_eq!(rec.fs_hz, 300.0);
            assert_eq!(rec.n_samples(), n);
            assert_eq!(rec.leads.len(), 1);
            let r = &j["records"][name];
            assert_eq!(r["shape"][1].as_u64().unwrap() as usize, n);
            let adu: Vec<f64> = r["adu"]
                .as_array()
                .unwrap()
                .iter()
                .map(|v| v.as_f64().unwrap())
                .collect();
            for (i, (a, b)) in rec.leads[0].samples.iter().zip(&adu).enumerate() {
                assert!(
                    (a - b / 1000.0).abs() < 1e-12,
                    "{name} sample {i}: {a} vs {b}"
                );
            }
            // The converter wrote checksum 0: a warning, and the record is read.
            assert!(
                warnings
                    .iter()
                    .any(|w| w.contains(name) && w.contains("field checksum")),
                "{warnings:?}"
            );
            let e =
                read_record_checked(&cinc(&format!("{name}.hea")), None, ChecksumPolicy::Strict)
                    .unwrap_err()
                    .to_string();
            assert!(
                e.contains(&format!("{name}.hea")) && e.contains("field checksum"),
                "{e}"
            );
        }
    }

    #[test]
    fn bad_matlab_signal_files_are_refused_by_field() {
        let hea = std::fs::read(cinc("A00093.hea")).unwrap();
        let mat = std::fs::read(cinc("A00093.mat")).unwrap();
        let run = |m: &[u8], h: &[u8]| {
            record_from_bytes(Path::new("d/A00093.hea"), h, &[("A00093.mat", m)], None)
                .map(|_| ())
                .unwrap_err()
                .to_string()
        };
        let mut m = mat.clone();
        m[0] = 20; // type 20: int32 elements, format 16 expects int16
        assert!(run(&m, &hea).contains("field type"));
        let mut m = mat.clone();
        m[4] = 2; // two rows for one signal
        assert!(run(&m, &hea).contains("field mrows"));
        let e = run(&mat[..3000], &hea);
        assert!(e.contains("ends early"), "{e}");
        let h2 = String::from_utf8(hea.clone())
            .unwrap()
            .replace("16+24", "16+20");
        assert!(run(&mat, h2.as_bytes()).contains("byte offset"));
        // Shorter than the byte offset: refused from its size, naming the signal file.
        let e = run(&mat[..12], b"A00093 1 300\nA00093.mat 16+24 1000/mV 16 0\n");
        assert!(e.contains("A00093.mat") && e.contains("ends early"), "{e}");
    }
}
