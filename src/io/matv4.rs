//! MATLAB version 4 matrix files (`.mat`) used as the signal file of a PhysioNet header.
//!
//! Layout (The MathWorks, "MAT-File Format", section on level 4 MAT-files): each matrix starts
//! with five 32-bit integers, `type mrows ncols imagf namlen`, then `namlen` bytes of name
//! (NUL-terminated), then the real part stored column by column. `type` is the decimal number
//! `MOPT`: M the byte order (0 little-endian, 1 big-endian; 2–4 are VAX/Cray orders), O always 0,
//! P the element type (0 f64, 1 f32, 2 i32, 3 i16, 4 u16, 5 u8) and T the matrix kind (0 full
//! numeric, 1 text, 2 sparse).
//!
//! A PhysioNet header naming such a file gives one row per signal value of a frame and one
//! column per frame, so the column-major data are the frames in order: the samples of a
//! format 16 (or 32) signal file after a byte offset equal to the matrix header's length.

use crate::error::{Error, Result};
use std::path::Path;

/// The header of the first matrix of a level 4 MAT-file.
#[derive(Debug, Clone, PartialEq)]
pub struct MatV4Header {
    /// True when the numbers are stored big-endian (M = 1).
    pub big_endian: bool,
    /// Element type P (0 f64, 1 f32, 2 i32, 3 i16, 4 u16, 5 u8).
    pub precision: u8,
    /// Rows.
    pub rows: u32,
    /// Columns.
    pub cols: u32,
    /// Variable name.
    pub name: String,
    /// Byte offset of the first element.
    pub data_start: usize,
}

/// Longest variable name accepted (MATLAB itself allows 63 characters).
const MAX_NAME: usize = 4096;

impl MatV4Header {
    /// Bytes of one element.
    pub fn bytes_per_value(&self) -> usize {
        match self.precision {
            0 => 8,
            1 | 2 => 4,
            3 | 4 => 2,
            _ => 1,
        }
    }

    /// Bytes of the real part, rows × cols × element size (saturating).
    pub fn data_len(&self) -> u64 {
        (self.rows as u64)
            .saturating_mul(self.cols as u64)
            .saturating_mul(self.bytes_per_value() as u64)
    }

    /// Name of the element type, for messages.
    pub fn precision_name(&self) -> &'static str {
        match self.precision {
            0 => "64-bit floats",
            1 => "32-bit floats",
            2 => "32-bit integers",
            3 => "16-bit integers",
            4 => "unsigned 16-bit integers",
            _ => "unsigned bytes",
        }
    }
}

/// Parse the first matrix header of a level 4 MAT-file. Errors name `path` and the field.
pub fn parse_header(path: &Path, bytes: &[u8]) -> Result<MatV4Header> {
    if bytes.len() < 20 {
        return Err(Error::input(
            path,
            "MAT header",
            format!(
                "{} bytes is shorter than the 20-byte header of a MATLAB v4 matrix",
                bytes.len()
            ),
        ));
    }
    let word = |i: usize, be: bool| {
        let b = [bytes[i], bytes[i + 1], bytes[i + 2], bytes[i + 3]];
        if be {
            i32::from_be_bytes(b)
        } else {
            i32::from_le_bytes(b)
        }
    };
    // The type's M digit says the byte order; try little-endian first.
    let le = word(0, false);
    let be = word(0, true);
    let (t, big_endian) = if (0..1000).contains(&le) {
        (le, false)
    } else if (1000..2000).contains(&be) {
        (be, true)
    } else {
        return Err(Error::input(
            path,
            "MAT header, field type",
            format!("{le} is not a MATLAB v4 matrix type (MOPT with M 0 or 1, O 0, P 0–5, T 0); is this a MATLAB v5 or later file?"),
        ));
    };
    let (o, p, kind) = ((t / 100) % 10, (t / 10) % 10, t % 10);
    if o != 0 || p > 5 {
        return Err(Error::input(
            path,
            "MAT header, field type",
            format!("{t} is not a MATLAB v4 matrix type (O must be 0, P 0–5)"),
        ));
    }
    if kind != 0 {
        return Err(Error::input(
            path,
            "MAT header, field type",
            format!("matrix kind T = {kind} (text or sparse); a signal needs a full numeric matrix (T = 0)"),
        ));
    }
    let nonneg = |i: usize, what: &str| -> Result<u32> {
        let v = word(i, big_endian);
        u32::try_from(v).map_err(|_| {
            Error::input(
                path,
                format!("MAT header, field {what}"),
                format!("{v} is negative"),
            )
        })
    };
    let rows = nonneg(4, "mrows")?;
    let cols = nonneg(8, "ncols")?;
    let imagf = word(12, big_endian);
    if imagf != 0 {
        return Err(Error::input(
            path,
            "MAT header, field imagf",
            "the matrix is complex; a signal needs a real matrix",
        ));
    }
    let namlen = nonneg(16, "namlen")? as usize;
    if namlen == 0 || namlen > MAX_NAME {
        return Err(Error::input(
            path,
            "MAT header, field namlen",
            format!("name length {namlen} is outside 1..={MAX_NAME}"),
        ));
    }
    let Some(raw) = bytes.get(20..20 + namlen) else {
        return Err(Error::input(
            path,
            "MAT header, field name",
            format!(
                "the name of {namlen} bytes runs past the end of the file ({} bytes)",
                bytes.len()
            ),
        ));
    };
    let name = String::from_utf8_lossy(raw)
        .trim_end_matches('\0')
        .to_string();
    Ok(MatV4Header {
        big_endian,
        precision: p as u8,
        rows,
        cols,
        name,
        data_start: 20 + namlen,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn header(t: i32, rows: i32, cols: i32, imagf: i32, name: &[u8]) -> Vec<u8> {
        let mut b = Vec::new();
        for v in [t, rows, cols, imagf, name.len() as i32] {
            b.extend_from_slice(&v.to_le_bytes());
        }
        b.extend_from_slice(name);
        b
    }

    #[test]
    fn reads_the_fields_of_a_little_endian_int16_matrix() {
        // Layout: MathWorks MAT-File Format, level 4 (type 30 = little-endian, int16, full).
        let b = header(30, 1, 9000, 0, b"val\0");
        let h = parse_header(Path::new("a.mat"), &b).unwrap();
        assert_eq!(
            h,
            MatV4Header {
                big_endian: false,
                precision: 3,
                rows: 1,
                cols: 9000,
                name: "val".into(),
                data_start: 24
            }
        );
        assert_eq!(h.data_len(), 18000);
    }

    #[test]
    fn refuses_what_is_not_a_real_full_v4_matrix() {
        let cases: Vec<(Vec<u8>, &str)> = vec![
            (vec![0u8; 10], "shorter than the 20-byte header"),
            (header(31, 1, 10, 0, b"v\0"), "matrix kind"),
            (header(130, 1, 10, 0, b"v\0"), "O must be 0"),
            (header(30, 1, 10, 1, b"v\0"), "complex"),
            (header(30, -1, 10, 0, b"v\0"), "field mrows"),
            (header(30, 1, 10, 0, b""), "field namlen"),
            (
                b"MATLAB 5.0 MAT-file, Platform: GLNXA64".to_vec(),
                "MATLAB v5",
            ),
        ];
        for (b, want) in cases {
            let e = parse_header(Path::new("bad.mat"), &b)
                .unwrap_err()
                .to_string();
            assert!(e.contains("bad.mat") && e.contains(want), "{want}: {e}");
        }
        let mut b = header(30, 1, 10, 0, b"val\0");
        b.truncate(22);
        let e = parse_header(Path::new("t.mat"), &b)
            .unwrap_err()
            .to_string();
        assert!(e.contains("runs past the end"), "{e}");
    }
}
