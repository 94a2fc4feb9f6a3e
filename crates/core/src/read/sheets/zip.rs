//! The zip container of `.xlsx` and `.ods` files: the central directory
//! and the entries Turnover needs, stored or deflated (inflated by
//! `miniz_oxide`), each checked against its CRC-32 and declared size.
//!
//! Inflating is bounded: all entries read from one file together may not
//! exceed [`INFLATED_LIMIT`] bytes, so a small file that would inflate to
//! gigabytes (a "zip bomb") is refused with a sentence instead of taking
//! the page's or the command's memory.

use crate::error::Error;

/// The most bytes all entries read from one archive may inflate to
/// (200 MB). A plate reader's workbook of a thousand kinetic reads is a
/// few megabytes of XML; this is far above any real table and far below
/// what a browser tab can hold.
pub const INFLATED_LIMIT: usize = 200_000_000;

/// One file of the archive, as listed by its central directory.
#[derive(Clone, Debug)]
struct Entry {
    name: String,
    method: u16,
    flags: u16,
    crc: u32,
    compressed: u64,
    size: u64,
    local_header: u64,
}

/// A zip archive held in memory.
pub struct Archive<'a> {
    bytes: &'a [u8],
    entries: Vec<Entry>,
    /// Bytes inflated so far, against [`INFLATED_LIMIT`].
    inflated: usize,
}

fn corrupt(detail: &str) -> Error {
    Error::invalid_data(format!(
        "the file looks like a spreadsheet but its zip container is damaged ({detail}); open it in the spreadsheet program and save it again"
    ))
}

fn u16_at(bytes: &[u8], at: usize) -> Option<u16> {
    Some(u16::from_le_bytes(bytes.get(at..at.checked_add(2)?)?.try_into().ok()?))
}

fn u32_at(bytes: &[u8], at: usize) -> Option<u32> {
    Some(u32::from_le_bytes(bytes.get(at..at.checked_add(4)?)?.try_into().ok()?))
}

fn u64_at(bytes: &[u8], at: usize) -> Option<u64> {
    Some(u64::from_le_bytes(bytes.get(at..at.checked_add(8)?)?.try_into().ok()?))
}

/// Whether `bytes` begin like a zip archive (a local file header, or the
/// end record of an empty archive).
pub fn looks_like_zip(bytes: &[u8]) -> bool {
    bytes.starts_with(b"PK\x03\x04") || bytes.starts_with(b"PK\x05\x06")
}

impl<'a> Archive<'a> {
    /// Reads the central directory of `bytes`.
    pub fn open(bytes: &'a [u8]) -> Result<Self, Error> {
        // The end-of-central-directory record is 22 bytes plus a comment of
        // at most 65,535 bytes, so it starts within the last 65,557 bytes.
        let earliest = bytes.len().saturating_sub(22 + 65_535);
        let end = (earliest..bytes.len().saturating_sub(21))
            .rev()
            .find(|&at| u32_at(bytes, at) == Some(0x0605_4b50))
            .ok_or_else(|| corrupt("no central directory"))?;
        let mut count = u64::from(u16_at(bytes, end + 10).ok_or_else(|| corrupt("short end record"))?);
        let mut directory = u64::from(u32_at(bytes, end + 16).ok_or_else(|| corrupt("short end record"))?);
        if count == 0xFFFF || directory == 0xFFFF_FFFF {
            // Zip64: a locator just before the end record points to the
            // 64-bit end record.
            let locator = end.checked_sub(20).filter(|&at| u32_at(bytes, at) == Some(0x0706_4b50)).ok_or_else(|| corrupt("no zip64 locator"))?;
            let record = u64_at(bytes, locator + 8).and_then(|r| usize::try_from(r).ok()).ok_or_else(|| corrupt("zip64 locator"))?;
            if u32_at(bytes, record) != Some(0x0606_4b50) {
                return Err(corrupt("no zip64 end record"));
            }
            count = u64_at(bytes, record + 32).ok_or_else(|| corrupt("zip64 end record"))?;
            directory = u64_at(bytes, record + 48).ok_or_else(|| corrupt("zip64 end record"))?;
        }
        let mut at = usize::try_from(directory).map_err(|_| corrupt("directory offset"))?;
        let mut entries = Vec::new();
        for _ in 0..count {
            if u32_at(bytes, at) != Some(0x0201_4b50) {
                return Err(corrupt("a directory entry is missing"));
            }
            let field = |offset: usize| u16_at(bytes, at + offset).ok_or_else(|| corrupt("short directory entry"));
            let long = |offset: usize| u32_at(bytes, at + offset).ok_or_else(|| corrupt("short directory entry"));
            let flags = field(8)?;
            let method = field(10)?;
            let crc = long(16)?;
            let mut compressed = u64::from(long(20)?);
            let mut size = u64::from(long(24)?);
            let name_length = usize::from(field(28)?);
            let extra_length = usize::from(field(30)?);
            let comment_length = usize::from(field(32)?);
            let mut local_header = u64::from(long(42)?);
            let name_start = at + 46;
            let name_bytes = bytes.get(name_start..name_start + name_length).ok_or_else(|| corrupt("short entry name"))?;
            // Names are UTF-8 (flag bit 11) or, in old archives, code page
            // 437; the names Turnover looks for are ASCII either way.
            let name = String::from_utf8_lossy(name_bytes).replace('\\', "/");
            let extra = bytes.get(name_start + name_length..name_start + name_length + extra_length).ok_or_else(|| corrupt("short extra field"))?;
            read_zip64_extra(extra, &mut size, &mut compressed, &mut local_header);
            entries.push(Entry { name, method, flags, crc, compressed, size, local_header });
            at = name_start + name_length + extra_length + comment_length;
        }
        Ok(Archive { bytes, entries, inflated: 0 })
    }

    /// Whether the archive holds `name` (exactly, or ignoring ASCII case).
    pub fn has(&self, name: &str) -> bool {
        self.find(name).is_some()
    }

    fn find(&self, name: &str) -> Option<&Entry> {
        let name = name.trim_start_matches('/');
        self.entries
            .iter()
            .find(|e| e.name == name)
            .or_else(|| self.entries.iter().find(|e| e.name.eq_ignore_ascii_case(name)))
    }

    /// The contents of entry `name`, or `None` when the archive has no
    /// such entry.
    pub fn read(&mut self, name: &str) -> Result<Option<Vec<u8>>, Error> {
        let Some(entry) = self.find(name).cloned() else {
            return Ok(None);
        };
        if entry.flags & 1 != 0 {
            return Err(Error::invalid_data(
                "the spreadsheet is password-protected (encrypted); Turnover cannot read it: remove the password in the spreadsheet program, or save the sheet as .csv",
            ));
        }
        let bytes = self.bytes;
        let local = usize::try_from(entry.local_header).map_err(|_| corrupt("entry offset"))?;
        if u32_at(bytes, local) != Some(0x0403_4b50) {
            return Err(corrupt(&format!("entry '{}' is missing", entry.name)));
        }
        let name_length = usize::from(u16_at(bytes, local + 26).ok_or_else(|| corrupt("short local header"))?);
        let extra_length = usize::from(u16_at(bytes, local + 28).ok_or_else(|| corrupt("short local header"))?);
        let start = local + 30 + name_length + extra_length;
        let length = usize::try_from(entry.compressed).map_err(|_| corrupt("entry size"))?;
        let data = start.checked_add(length).and_then(|end| bytes.get(start..end)).ok_or_else(|| corrupt(&format!("entry '{}' is cut short", entry.name)))?;
        let budget = INFLATED_LIMIT - self.inflated;
        if entry.size > budget as u64 {
            return Err(too_large());
        }
        let contents = match entry.method {
            0 => data.to_vec(),
            8 => miniz_oxide::inflate::decompress_to_vec_with_limit(data, budget).map_err(|e| {
                if e.status == miniz_oxide::inflate::TINFLStatus::HasMoreOutput {
                    too_large()
                } else {
                    corrupt(&format!("entry '{}' does not inflate", entry.name))
                }
            })?,
            method => {
                return Err(Error::invalid_data(format!(
                    "the spreadsheet's entry '{}' is compressed by method {method}, which Turnover does not read (only stored and deflated entries); save the file again from the spreadsheet program",
                    entry.name
                )))
            }
        };
        if contents.len() as u64 != entry.size || crc32(&contents) != entry.crc {
            return Err(corrupt(&format!("entry '{}' fails its checksum", entry.name)));
        }
        self.inflated += contents.len();
        Ok(Some(contents))
    }
}

fn too_large() -> Error {
    Error::invalid_data(format!(
        "the spreadsheet would take more than {} MB when unpacked, more than Turnover reads from one file; save the sheet you need as .csv, or copy it into a new workbook",
        INFLATED_LIMIT / 1_000_000
    ))
}

/// Replaces 0xFFFFFFFF sizes and offsets by their values in the zip64
/// extended information field (header 0x0001), which lists them in this
/// order, each only when its 32-bit field is full.
fn read_zip64_extra(mut extra: &[u8], size: &mut u64, compressed: &mut u64, local_header: &mut u64) {
    while extra.len() >= 4 {
        let id = u16::from_le_bytes([extra[0], extra[1]]);
        let length = usize::from(u16::from_le_bytes([extra[2], extra[3]]));
        let Some(body) = extra.get(4..4 + length) else { return };
        if id == 1 {
            let mut fields = body.chunks_exact(8).map(|c| u64::from_le_bytes(c.try_into().unwrap_or([0; 8])));
            for value in [size, compressed, local_header] {
                if *value == 0xFFFF_FFFF {
                    match fields.next() {
                        Some(v) => *value = v,
                        None => return,
                    }
                }
            }
            return;
        }
        extra = &extra[4 + length..];
    }
}

/// The CRC-32 of zip (polynomial 0xEDB88320, reflected), by a table of
/// 256 entries made at each call (2,048 steps, nothing against inflating
/// a part; a table kept in the binary would add a kilobyte of
/// incompressible data to the page).
pub fn crc32(bytes: &[u8]) -> u32 {
    let mut table = [0u32; 256];
    for (n, entry) in table.iter_mut().enumerate() {
        let mut c = n as u32;
        for _ in 0..8 {
            c = if c & 1 != 0 { 0xEDB8_8320 ^ (c >> 1) } else { c >> 1 };
        }
        *entry = c;
    }
    !bytes.iter().fold(!0u32, |c, &b| table[((c ^ u32::from(b)) & 0xFF) as usize] ^ (c >> 8))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The check value of CRC-32 for "123456789" is 0xCBF43926 (the
    /// catalogue of parametrised CRC algorithms, CRC-32/ISO-HDLC).
    #[test]
    fn crc_of_the_standard_check_string() {
        assert_eq!(crc32(b"123456789"), 0xCBF4_3926);
        assert_eq!(crc32(b""), 0);
    }
}
