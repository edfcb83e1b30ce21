//! The compact binary model file.
//!
//! Layout (all integers and floats little-endian):
//!
//! | bytes | content |
//! |---|---|
//! | 4 | magic `MVDM` |
//! | 2 | format version (u16) |
//! | 4 | number of variables `p` (u32) |
//! | 8 | sample size `n` (u64) |
//! | 4 + k | estimator as compact JSON: length (u32), then UTF-8 |
//! | per variable: 4 + k | name: length (u32), then UTF-8 |
//! | 8·p | location |
//! | 8·p(p+1)/2 | scatter, lower triangle by rows |
//! | 8 | (version 2) number `m` of calibration rows (u64; 0 for none) |
//! | 8·m | (version 2) their squared distances, increasing |
//! | 4 | CRC-32 of everything before it |
//!
//! Version 1 files end after the scatter; they are read as models without
//! calibration rows.

use super::crc32::crc32;
use super::{ModelFile, FORMAT_VERSION};
use crate::error::{Error, Result};
use crate::estimate::FitMethod;
use crate::model::DistanceModel;
use crate::scatter::Scatter;

pub(crate) const MAGIC: &[u8; 4] = b"MVDM";
/// Largest dimension a binary file may declare (keeps allocations bounded
/// when reading untrusted bytes).
const MAX_DIM: usize = 1 << 14;

pub(crate) fn encode(file: &ModelFile) -> Vec<u8> {
    let m = file.model();
    let p = m.dim();
    let mut out = Vec::with_capacity(64 + 8 * p * (p + 3) / 2);
    out.extend_from_slice(MAGIC);
    out.extend_from_slice(&(FORMAT_VERSION as u16).to_le_bytes());
    out.extend_from_slice(&(p as u32).to_le_bytes());
    out.extend_from_slice(&(m.sample_size() as u64).to_le_bytes());
    let est = serde_json::to_string(m.fit_method()).unwrap_or_default();
    put_str(&mut out, &est);
    for v in file.variables() {
        put_str(&mut out, v);
    }
    for &v in m.location() {
        out.extend_from_slice(&v.to_le_bytes());
    }
    let s = m.scatter().matrix();
    for i in 0..p {
        for j in 0..=i {
            out.extend_from_slice(&s[(i, j)].to_le_bytes());
        }
    }
    let calibration = m.calibration().map_or(&[][..], |c| c.squared_distances());
    out.extend_from_slice(&(calibration.len() as u64).to_le_bytes());
    for &v in calibration {
        out.extend_from_slice(&v.to_le_bytes());
    }
    let crc = crc32(&out);
    out.extend_from_slice(&crc.to_le_bytes());
    out
}

fn put_str(out: &mut Vec<u8>, s: &str) {
    out.extend_from_slice(&(s.len() as u32).to_le_bytes());
    out.extend_from_slice(s.as_bytes());
}

fn bad(reason: impl Into<String>) -> Error {
    Error::Format {
        reason: reason.into(),
    }
}

struct Cursor<'a> {
    bytes: &'a [u8],
    at: usize,
}

impl<'a> Cursor<'a> {
    fn take(&mut self, k: usize, what: &str) -> Result<&'a [u8]> {
        let end = self
            .at
            .checked_add(k)
            .filter(|&e| e <= self.bytes.len())
            .ok_or_else(|| bad(format!("truncated: the file ends inside the {what}")))?;
        let s = &self.bytes[self.at..end];
        self.at = end;
        Ok(s)
    }
    fn u16(&mut self, what: &str) -> Result<u16> {
        let b = self.take(2, what)?;
        Ok(u16::from_le_bytes([b[0], b[1]]))
    }
    fn u32(&mut self, what: &str) -> Result<u32> {
        let b = self.take(4, what)?;
        Ok(u32::from_le_bytes([b[0], b[1], b[2], b[3]]))
    }
    fn u64(&mut self, what: &str) -> Result<u64> {
        let b = self.take(8, what)?;
        let mut a = [0u8; 8];
        a.copy_from_slice(b);
        Ok(u64::from_le_bytes(a))
    }
    fn f64(&mut self, what: &str) -> Result<f64> {
        Ok(f64::from_bits(self.u64(what)?))
    }
    fn string(&mut self, what: &str) -> Result<String> {
        let len = self.u32(what)? as usize;
        let b = self.take(len, what)?;
        String::from_utf8(b.to_vec()).map_err(|_| bad(format!("the {what} is not UTF-8")))
    }
}

pub(crate) fn decode(bytes: &[u8]) -> Result<ModelFile> {
    if bytes.len() < 4 || &bytes[..4] != MAGIC {
        return Err(bad("not a binary model file (wrong magic bytes)"));
    }
    if bytes.len() < 10 {
        return Err(bad("truncated: the file ends inside the header"));
    }
    let mut c = Cursor { bytes, at: 4 };
    let version = c.u16("format version")?;
    if version as u32 > FORMAT_VERSION || version == 0 {
        return Err(bad(format!(
            "format version {version} is newer than this build reads ({FORMAT_VERSION}); upgrade mvdist"
        )));
    }
    if bytes.len() < 4 + 2 + 4 {
        return Err(bad("truncated"));
    }
    let (body, tail) = bytes.split_at(bytes.len() - 4);
    let stored = u32::from_le_bytes([tail[0], tail[1], tail[2], tail[3]]);
    if crc32(body) != stored {
        return Err(bad("checksum mismatch: the file is corrupted or truncated"));
    }
    let mut c = Cursor { bytes: body, at: 6 };
    let p = c.u32("dimension")? as usize;
    if p == 0 || p > MAX_DIM {
        return Err(bad(format!("implausible number of variables {p}")));
    }
    let n = c.u64("sample size")?;
    let est_text = c.string("estimator")?;
    let estimator: FitMethod =
        serde_json::from_str(&est_text).map_err(|e| bad(format!("estimator: {e}")))?;
    let mut variables = Vec::with_capacity(p.min(1024));
    for _ in 0..p {
        variables.push(c.string("variable name")?);
    }
    let mut location = Vec::with_capacity(p);
    for _ in 0..p {
        location.push(c.f64("location")?);
    }
    let mut scatter = vec![0.0; p * p];
    for i in 0..p {
        for j in 0..=i {
            let v = c.f64("scatter")?;
            scatter[i * p + j] = v;
            scatter[j * p + i] = v;
        }
    }
    let mut calibration = None;
    if version >= 2 {
        let m = c.u64("number of calibration rows")?;
        // Each value takes 8 bytes: a count the file cannot hold is damage.
        if m > ((body.len() - c.at) / 8) as u64 {
            return Err(bad(format!(
                "truncated: the file declares {m} calibration rows but holds fewer"
            )));
        }
        if m > 0 {
            let mut values = Vec::with_capacity(m as usize);
            for _ in 0..m {
                values.push(c.f64("calibration rows")?);
            }
            calibration = Some(
                crate::calibration::EmpiricalReference::from_squared_distances(values)
                    .map_err(|e| bad(format!("calibration rows: {e}")))?,
            );
        }
    }
    if c.at != body.len() {
        return Err(bad("unexpected bytes after the model"));
    }
    let scatter = Scatter::from_row_major(&scatter, p).map_err(|e| bad(format!("scatter: {e}")))?;
    let n = usize::try_from(n).map_err(|_| bad("sample size too large"))?;
    let mut model = DistanceModel::from_parts(location, scatter, n, estimator)
        .map_err(|e| bad(e.to_string()))?;
    if let Some(c) = calibration {
        model = model.with_calibration(c);
    }
    ModelFile::new(variables, model).map_err(|e| bad(e.to_string()))
}
