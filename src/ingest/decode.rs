//! The bytes of a delimited-text file as UTF-8: gzip decompressed with a size cap, the text
//! encoding decided (a byte-order mark, the `encoding` setting, or detection when the bytes are
//! not UTF-8) and decoded, and lines longer than the limit set aside while streaming, so that
//! neither a huge line nor a huge decompressed file is ever held whole.
//!
//! The fast path is untouched: a plain UTF-8 file is memory-mapped and only validated (SIMD,
//! on two threads); nothing is copied.

use std::fs::File;
use std::io::Read;
use std::path::Path;

use encoding_rs::{Encoding, UTF_16BE, UTF_16LE, UTF_8};

use super::table::Rejected;
pub use crate::config::EncodingSetting;
use crate::error::{Error, Result};

/// Reading limits (the `[input]` settings).
#[derive(Debug, Clone, Copy)]
pub struct Limits {
    /// A line longer than this many bytes is quarantined, never held whole.
    pub max_line_bytes: usize,
    /// A compressed file that expands past this many bytes is refused.
    pub max_decompressed_bytes: u64,
}

impl Default for Limits {
    fn default() -> Self {
        Limits {
            max_line_bytes: 4 << 20,
            max_decompressed_bytes: 16 << 30,
        }
    }
}

/// The encoding a file was read in, and how that was decided (shown by `check`).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct EncodingUsed {
    /// Its name ("UTF-8", "UTF-16LE", "windows-1252", "ISO-8859-1", …).
    pub name: String,
    /// How it was decided, in words.
    pub how: String,
}

/// A text file's bytes as UTF-8, with what was decided and set aside on the way.
pub struct Decoded {
    /// UTF-8 bytes (a byte-order mark removed).
    pub bytes: Bytes,
    /// The encoding read.
    pub encoding: EncodingUsed,
    /// Lines longer than the limit: each is left as an empty line in `bytes` (so line numbers
    /// hold) and reported here with its first bytes.
    pub long_lines: Vec<Rejected>,
}

/// File contents: memory-mapped, or held in memory.
pub enum Bytes {
    /// A read-only map of the file.
    Mapped(memmap2::Mmap),
    /// Decompressed, decoded or built-in bytes.
    Owned(Vec<u8>),
}

impl std::ops::Deref for Bytes {
    type Target = [u8];
    fn deref(&self) -> &[u8] {
        match self {
            Bytes::Mapped(m) => m,
            Bytes::Owned(v) => v,
        }
    }
}

impl Bytes {
    /// Tell the system that the mapped pages wholly before `end` will not be read again, so
    /// that they stop counting towards this process's memory (they stay in the page cache,
    /// and a later read would load them again from the file). Held bytes are kept.
    pub fn release_before(&self, end: usize) {
        let Bytes::Mapped(m) = self else {
            return;
        };
        let page = 4096;
        let end = end.min(m.len()) / page * page;
        if end > 0 {
            // SAFETY: the map is read-only and file-backed: after MADV_DONTNEED a read of
            // these pages loads the same bytes from the file again, so no slice into the map
            // sees a change.
            let _ = unsafe { m.unchecked_advise_range(memmap2::UncheckedAdvice::DontNeed, 0, end) };
        }
    }
}

const UTF8_BOM: &[u8] = b"\xEF\xBB\xBF";

/// Read a text file: decompress, decide the encoding, decode, set long lines aside.
pub fn read_file(path: &Path, setting: EncodingSetting, limits: Limits) -> Result<Decoded> {
    let mut file = File::open(path).map_err(|e| Error::io(path, e))?;
    let mut magic = [0u8; 2];
    let n = file.read(&mut magic).map_err(|e| Error::io(path, e))?;
    if n == 2 && magic == [0x1f, 0x8b] {
        let file = File::open(path).map_err(|e| Error::io(path, e))?;
        let gz = flate2::read::MultiGzDecoder::new(std::io::BufReader::new(file));
        return read_stream(path, gz, setting, limits);
    }
    let len = file.metadata().map_err(|e| Error::io(path, e))?.len();
    if len == 0 {
        return decode_owned(path, Vec::new(), setting, limits);
    }
    // SAFETY: the map is read-only and private to this process; a file truncated underneath a
    // running load is outside what hubwatch can defend against (as for any mmap reader).
    let map = unsafe { memmap2::Mmap::map(&file) }.map_err(|e| Error::io(path, e))?;
    if let Some(used) = plain_utf8(&map, setting) {
        return Ok(Decoded {
            bytes: Bytes::Mapped(map),
            encoding: used,
            long_lines: Vec::new(),
        });
    }
    decode_all(path, &map, setting, limits)
}

/// Decide the encoding of bytes that are not plain UTF-8 and decode them whole.
fn decode_all(
    path: &Path,
    bytes: &[u8],
    setting: EncodingSetting,
    limits: Limits,
) -> Result<Decoded> {
    let (enc, how) = decide(path, bytes, setting)?;
    let mut out = Vec::with_capacity(bytes.len() + bytes.len() / 8);
    let mut filter = LineFilter::new(limits.max_line_bytes);
    decode_into(path, bytes, enc, &mut out, &mut filter)?;
    Ok(Decoded {
        bytes: Bytes::Owned(out),
        encoding: how,
        long_lines: filter.finish(),
    })
}

/// Decode bytes already in memory (the built-in sample, an empty file).
pub fn decode_owned(
    path: &Path,
    bytes: Vec<u8>,
    setting: EncodingSetting,
    limits: Limits,
) -> Result<Decoded> {
    if let Some(used) = plain_utf8(&bytes, setting) {
        let mut filter = LineFilter::new(limits.max_line_bytes);
        let mut out = Vec::with_capacity(bytes.len());
        filter.push(&bytes, &mut out);
        let long_lines = filter.finish();
        let bytes = if long_lines.is_empty() { bytes } else { out };
        return Ok(Decoded {
            bytes: Bytes::Owned(bytes),
            encoding: used,
            long_lines,
        });
    }
    decode_all(path, &bytes, setting, limits)
}

/// The fast path: when the setting allows UTF-8 and the bytes are UTF-8 without a UTF-16
/// byte-order mark, nothing needs decoding (a UTF-8 byte-order mark is skipped by the reader).
fn plain_utf8(bytes: &[u8], setting: EncodingSetting) -> Option<EncodingUsed> {
    let utf8_allowed = match setting {
        EncodingSetting::Auto => !bytes.starts_with(b"\xFF\xFE") && !bytes.starts_with(b"\xFE\xFF"),
        EncodingSetting::Named(e) => e == UTF_8,
        EncodingSetting::Latin1 => false,
    };
    if !utf8_allowed || !valid_utf8(bytes) {
        return None;
    }
    let how = match (setting, bytes.starts_with(UTF8_BOM)) {
        (EncodingSetting::Auto, true) => "byte-order mark",
        (EncodingSetting::Auto, false) => "the bytes are valid UTF-8",
        _ => "set by the encoding option",
    };
    Some(EncodingUsed {
        name: "UTF-8".into(),
        how: how.into(),
    })
}

/// UTF-8 validation on two threads for large inputs (SIMD within each).
fn valid_utf8(bytes: &[u8]) -> bool {
    if bytes.len() < (8 << 20) {
        return simdutf8::basic::from_utf8(bytes).is_ok();
    }
    // Split at a newline: a multi-byte sequence never spans one.
    let mid = memchr::memchr(b'\n', &bytes[bytes.len() / 2..])
        .map_or(bytes.len(), |i| bytes.len() / 2 + i + 1);
    let (a, b) = bytes.split_at(mid);
    std::thread::scope(|sc| {
        let h = sc.spawn(|| simdutf8::basic::from_utf8(b).is_ok());
        let ra = simdutf8::basic::from_utf8(a).is_ok();
        ra && h.join().unwrap_or(false)
    })
}

/// Which decoder to run.
#[derive(Debug, Clone, Copy)]
enum Decoder {
    Whatwg(&'static Encoding),
    Latin1,
}

/// Decide the encoding of bytes that are not plain UTF-8.
fn decide(path: &Path, bytes: &[u8], setting: EncodingSetting) -> Result<(Decoder, EncodingUsed)> {
    let used = |name: &str, how: String| EncodingUsed {
        name: name.to_string(),
        how,
    };
    match setting {
        EncodingSetting::Latin1 => Ok((
            Decoder::Latin1,
            used("ISO-8859-1", "set by the encoding option".into()),
        )),
        EncodingSetting::Named(e) if e == UTF_8 => Err(not_utf8(path, bytes)),
        EncodingSetting::Named(e) => Ok((
            Decoder::Whatwg(e),
            used(e.name(), "set by the encoding option".into()),
        )),
        EncodingSetting::Auto => {
            if bytes.starts_with(b"\xFF\xFE") {
                return Ok((
                    Decoder::Whatwg(UTF_16LE),
                    used("UTF-16LE", "byte-order mark".into()),
                ));
            }
            if bytes.starts_with(b"\xFE\xFF") {
                return Ok((
                    Decoder::Whatwg(UTF_16BE),
                    used("UTF-16BE", "byte-order mark".into()),
                ));
            }
            let (line, byte) = first_invalid(bytes);
            let mut det = chardetng::EncodingDetector::new(chardetng::Iso2022JpDetection::Deny);
            // The first 4 MiB are plenty for a guess; the detector is not fast.
            det.feed(&bytes[..bytes.len().min(4 << 20)], bytes.len() <= 4 << 20);
            let guess = det.guess(None, chardetng::Utf8Detection::Deny);
            Ok((
                Decoder::Whatwg(guess),
                used(
                    guess.name(),
                    format!(
                        "detected: not valid UTF-8 (line {line}, byte 0x{byte:02X}); the bytes read as {}; set --encoding if this is wrong",
                        guess.name()
                    ),
                ),
            ))
        }
    }
}

/// The 1-based line and value of the first byte that is not valid UTF-8.
fn first_invalid(bytes: &[u8]) -> (u64, u8) {
    let at = match std::str::from_utf8(bytes) {
        Ok(_) => return (0, 0),
        Err(e) => e.valid_up_to(),
    };
    let line = memchr::memchr_iter(b'\n', &bytes[..at]).count() as u64 + 1;
    (line, bytes[at])
}

/// The error for `--encoding utf-8` on bytes that are not UTF-8: where, and what to try.
fn not_utf8(path: &Path, bytes: &[u8]) -> Error {
    let (line, byte) = first_invalid(bytes);
    Error::format(
        path,
        format!(
            "line {line} is not valid UTF-8 (byte 0x{byte:02X}); a spreadsheet may have saved it as windows-1252: \
             try --encoding windows-1252 (or --encoding auto to detect)"
        ),
    )
}

/// Decode `input` into UTF-8 in bounded steps, through the long-line filter.
fn decode_into(
    path: &Path,
    input: &[u8],
    dec: Decoder,
    out: &mut Vec<u8>,
    filter: &mut LineFilter,
) -> Result<()> {
    let mut t = Transcoder::new(Some(dec));
    for piece in input.chunks(1 << 19) {
        t.push(path, piece, false, out, filter)?;
    }
    t.push(path, &[], true, out, filter)
}

/// Read a compressed stream: decompress in steps, refuse past the size cap, decide the
/// encoding from the first bytes, and set long lines aside as they stream by.
fn read_stream(
    path: &Path,
    mut r: impl Read,
    setting: EncodingSetting,
    limits: Limits,
) -> Result<Decoded> {
    let gz_err = |e: std::io::Error| Error::format(path, format!("not a readable gzip file: {e}"));
    let mut raw = vec![0u8; 1 << 20];
    let mut total: u64 = 0;
    let mut out = Vec::new();
    let mut filter = LineFilter::new(limits.max_line_bytes);
    // Bytes held back until the encoding is decided (the start of the stream).
    let mut head: Vec<u8> = Vec::new();
    let mut state: Option<Transcoder> = None;
    let mut used = None;
    loop {
        let n = r.read(&mut raw).map_err(gz_err)?;
        total += n as u64;
        if total > limits.max_decompressed_bytes {
            return Err(Error::format(
                path,
                format!(
                    "decompresses to more than {} bytes (the limit [input] max_decompressed_bytes); \
                     if the file is genuine, raise the limit in a --config file",
                    limits.max_decompressed_bytes
                ),
            ));
        }
        let end = n == 0;
        let first: Vec<u8>;
        let (st, piece) = match &mut state {
            Some(st) => (st, &raw[..n]),
            None => {
                head.extend_from_slice(&raw[..n]);
                if head.len() < (1 << 20) && !end {
                    continue;
                }
                let (dec, how) = stream_encoding(path, &head, setting)?;
                used = Some(how);
                first = std::mem::take(&mut head);
                (state.insert(Transcoder::new(dec)), first.as_slice())
            }
        };
        st.push(path, piece, end, &mut out, &mut filter)?;
        if end {
            break;
        }
    }
    Ok(Decoded {
        bytes: Bytes::Owned(out),
        encoding: used.unwrap_or(EncodingUsed {
            name: "UTF-8".into(),
            how: "empty".into(),
        }),
        long_lines: filter.finish(),
    })
}

/// The encoding of a stream from its first bytes: `None` means plain UTF-8 (validated piece by
/// piece as it streams).
fn stream_encoding(
    path: &Path,
    head: &[u8],
    setting: EncodingSetting,
) -> Result<(Option<Decoder>, EncodingUsed)> {
    let utf16 = head.starts_with(b"\xFF\xFE") || head.starts_with(b"\xFE\xFF");
    let utf8_ok = {
        // The head may end inside a character: only the complete part must be valid.
        match std::str::from_utf8(head) {
            Ok(_) => true,
            Err(e) => e.error_len().is_none(),
        }
    };
    match setting {
        EncodingSetting::Auto if !utf16 && utf8_ok => Ok((
            None,
            EncodingUsed {
                name: "UTF-8".into(),
                how: if head.starts_with(UTF8_BOM) {
                    "byte-order mark".into()
                } else {
                    "the bytes are valid UTF-8".into()
                },
            },
        )),
        EncodingSetting::Named(e) if e == UTF_8 => {
            if utf8_ok {
                Ok((
                    None,
                    EncodingUsed {
                        name: "UTF-8".into(),
                        how: "set by the encoding option".into(),
                    },
                ))
            } else {
                Err(not_utf8(path, head))
            }
        }
        _ => {
            let (d, how) = decide(path, head, setting)?;
            Ok((Some(d), how))
        }
    }
}

/// Text in any encoding to UTF-8, piece by piece, through the line filter: the one decoding
/// loop of both the in-memory and the streaming paths. `None` is plain UTF-8, only validated
/// (an incomplete character is carried to the next piece).
struct Transcoder {
    dec: Option<Decoder>,
    inner: encoding_rs::Decoder,
    buf: Vec<u8>,
    utf8_tail: Vec<u8>,
}

impl Transcoder {
    fn new(dec: Option<Decoder>) -> Transcoder {
        let inner = match dec {
            // With BOM removal: the decoder sniffs and drops a BOM matching its encoding.
            Some(Decoder::Whatwg(e)) => e.new_decoder_with_bom_removal(),
            _ => UTF_8.new_decoder_without_bom_handling(),
        };
        Transcoder {
            dec,
            inner,
            buf: vec![0u8; 1 << 20],
            utf8_tail: Vec::new(),
        }
    }

    /// One piece (`last`: the end of the input).
    fn push(
        &mut self,
        path: &Path,
        piece: &[u8],
        last: bool,
        out: &mut Vec<u8>,
        filter: &mut LineFilter,
    ) -> Result<()> {
        match self.dec {
            None => {
                let tail = &mut self.utf8_tail;
                tail.extend_from_slice(piece);
                let ok_to = match std::str::from_utf8(tail) {
                    Ok(_) => tail.len(),
                    Err(e) if e.error_len().is_none() && !last => e.valid_up_to(),
                    Err(_) => {
                        let lines = memchr::memchr_iter(b'\n', out).count() as u64;
                        let (l, b) = first_invalid(tail);
                        return Err(Error::format(
                            path,
                            format!(
                                "line {} is not valid UTF-8 (byte 0x{b:02X}); set --encoding (for example windows-1252) to read it",
                                lines + l
                            ),
                        ));
                    }
                };
                filter.push(&tail[..ok_to], out);
                tail.drain(..ok_to);
            }
            Some(Decoder::Latin1) => {
                let s: String = piece.iter().map(|&b| b as char).collect();
                filter.push(s.as_bytes(), out);
            }
            Some(Decoder::Whatwg(_)) => {
                let mut src = piece;
                loop {
                    let (res, read, written, _) =
                        self.inner.decode_to_utf8(src, &mut self.buf, last);
                    filter.push(&self.buf[..written], out);
                    src = &src[read..];
                    if res == encoding_rs::CoderResult::InputEmpty {
                        break;
                    }
                }
            }
        }
        Ok(())
    }
}

/// Copies text to the output line by line; a line longer than the limit is replaced by an
/// empty line (so later line numbers hold) and recorded with its first 200 bytes. Line numbers
/// count physical lines, as the line scan does.
struct LineFilter {
    max: usize,
    /// 1-based number of the line being copied.
    line: u64,
    /// Bytes of the current line seen so far.
    len: usize,
    /// Offset in the output where the current line starts.
    start: usize,
    /// The current line is too long: its bytes are being dropped.
    dropping: bool,
    /// The first bytes of a line being dropped.
    prefix: Vec<u8>,
    long: Vec<Rejected>,
}

impl LineFilter {
    fn new(max: usize) -> LineFilter {
        LineFilter {
            max: max.max(1),
            line: 1,
            len: 0,
            start: 0,
            dropping: false,
            prefix: Vec::new(),
            long: Vec::new(),
        }
    }

    fn push(&mut self, mut text: &[u8], out: &mut Vec<u8>) {
        while !text.is_empty() {
            let nl = memchr::memchr(b'\n', text);
            let seg = &text[..nl.unwrap_or(text.len())];
            if !self.dropping && self.len + seg.len() > self.max {
                self.dropping = true;
                let kept = &out[self.start..];
                self.prefix = kept[..kept.len().min(200)].to_vec();
                out.truncate(self.start);
            }
            if self.dropping {
                let room = 200usize.saturating_sub(self.prefix.len());
                self.prefix.extend_from_slice(&seg[..seg.len().min(room)]);
            } else {
                out.extend_from_slice(seg);
            }
            self.len += seg.len();
            match nl {
                Some(i) => {
                    self.end_line();
                    out.push(b'\n');
                    self.start = out.len();
                    text = &text[i + 1..];
                }
                None => text = &[],
            }
        }
    }

    fn end_line(&mut self) {
        if self.dropping {
            let raw = String::from_utf8_lossy(&self.prefix).into_owned();
            self.long.push(Rejected {
                line: self.line,
                reason: format!(
                    "line of {} bytes, longer than the limit of {} ([input] max_line_bytes); not read",
                    self.len, self.max
                ),
                raw,
            });
        }
        self.line += 1;
        self.len = 0;
        self.dropping = false;
        self.prefix.clear();
    }

    fn finish(mut self) -> Vec<Rejected> {
        if self.dropping {
            self.end_line();
        }
        self.long
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn released_pages_read_the_same_bytes_again() {
        // Pages given back after a chunk is consumed are loaded again from the file if read.
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("big.csv");
        let text: Vec<u8> = (0..40_000u32)
            .flat_map(|i| format!("P{i},Q{i}\n").into_bytes())
            .collect();
        std::fs::write(&path, &text).unwrap();
        let file = File::open(&path).unwrap();
        let bytes = Bytes::Mapped(unsafe { memmap2::Mmap::map(&file) }.unwrap());
        assert_eq!(&bytes[..], &text[..]);
        for end in [0, 100, 4096, 10_000, text.len(), text.len() + 10] {
            bytes.release_before(end);
            assert_eq!(&bytes[..], &text[..], "after releasing up to {end}");
        }
        Bytes::Owned(text.clone()).release_before(text.len());
    }

    #[test]
    fn long_lines_become_empty_lines_and_are_reported() {
        let mut f = LineFilter::new(5);
        let mut out = Vec::new();
        f.push(b"ab\nabcdefgh", &mut out);
        f.push(b"ij\ncd\n", &mut out);
        let long = f.finish();
        assert_eq!(out, b"ab\n\ncd\n");
        assert_eq!(long.len(), 1);
        assert_eq!(long[0].line, 2);
        assert_eq!(long[0].raw, "abcdefghij");
        assert!(long[0].reason.contains("10 bytes"), "{}", long[0].reason);
    }
}
