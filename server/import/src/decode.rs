//! Bytes to lines: the text encoding (UTF-8 with or without a byte-order mark, UTF-16 LE
//! or BE with one, Latin-1 as the fallback), decoded in chunks so memory stays bounded,
//! with limits on the file's size and a line's length.

use std::io::Read;

use encoding_rs::{CoderResult, Decoder, Encoding, UTF_8, WINDOWS_1252};

use crate::{ImportError, Limits};

const CHUNK: usize = 64 * 1024;

/// A text line and its 1-based number in the file.
pub type Line = (usize, String);

/// Reads a byte stream as text lines.
pub struct LineReader<R> {
    inner: R,
    decoder: Decoder,
    encoding: &'static Encoding,
    /// The encoding was guessed as UTF-8 from the start of the file (no BOM).
    guessed_utf8: bool,
    pending: Vec<u8>,
    text: String,
    pos: usize,
    bytes_read: u64,
    line_no: usize,
    last_was_cr: bool,
    eof: bool,
    limits: Limits,
}

impl<R: Read> LineReader<R> {
    /// Sniffs the encoding from the first bytes and prepares to read.
    pub fn new(mut inner: R, limits: Limits) -> Result<Self, ImportError> {
        let mut head = vec![0u8; CHUNK];
        let mut got = 0;
        while got < head.len() {
            let n = read_some(&mut inner, &mut head[got..])?;
            if n == 0 {
                break;
            }
            got += n;
        }
        head.truncate(got);
        if got as u64 > limits.max_bytes {
            return Err(too_big(limits.max_bytes));
        }
        if head.is_empty() {
            return Err(ImportError::new("file", "the file is empty"));
        }
        let (encoding, bom, guessed_utf8) = sniff_encoding(&head)?;
        let pending = head[bom..].to_vec();
        Ok(Self {
            inner,
            decoder: encoding.new_decoder_without_bom_handling(),
            encoding,
            guessed_utf8,
            pending,
            text: String::new(),
            pos: 0,
            bytes_read: got as u64,
            line_no: 0,
            last_was_cr: false,
            eof: false,
            limits,
        })
    }

    /// The encoding's name as reported to the user.
    pub fn encoding_name(&self) -> &'static str {
        if self.encoding == WINDOWS_1252 {
            "Latin-1 (windows-1252)"
        } else {
            self.encoding.name()
        }
    }

    /// The next line (without its line ending), or `None` at the end of the file.
    pub fn next_line(&mut self) -> Result<Option<Line>, ImportError> {
        loop {
            if let Some(line) = self.take_line() {
                return Ok(Some(line));
            }
            if self.eof {
                if self.pos < self.text.len() {
                    let rest = self.text[self.pos..].to_string();
                    self.pos = self.text.len();
                    self.line_no += 1;
                    return Ok(Some((self.line_no, rest)));
                }
                return Ok(None);
            }
            self.fill()?;
        }
    }

    fn take_line(&mut self) -> Option<Line> {
        let rest = &self.text[self.pos..];
        let cut = rest.find(['\n', '\r'])?;
        let line = rest[..cut].to_string();
        let ender = rest.as_bytes()[cut];
        self.pos += cut + 1;
        // "\r\n" is one line ending: skip the '\n' after a '\r'.
        if ender == b'\n' && self.last_was_cr && cut == 0 {
            self.last_was_cr = false;
            return self.take_line();
        }
        self.last_was_cr = ender == b'\r';
        self.line_no += 1;
        Some((self.line_no, line))
    }

    fn fill(&mut self) -> Result<(), ImportError> {
        // Keep memory bounded: drop what has been handed out.
        self.text.drain(..self.pos);
        self.pos = 0;
        if self.text.len() > self.limits.max_line_bytes {
            return Err(ImportError::new(
                "file",
                format!(
                    "line {} is longer than {} bytes; this is not a delimited text export",
                    self.line_no + 1,
                    self.limits.max_line_bytes
                ),
            ));
        }
        if self.pending.is_empty() {
            let mut buf = vec![0u8; CHUNK];
            let n = read_some(&mut self.inner, &mut buf)?;
            self.bytes_read += n as u64;
            if self.bytes_read > self.limits.max_bytes {
                return Err(too_big(self.limits.max_bytes));
            }
            buf.truncate(n);
            self.pending = buf;
        }
        let last = self.pending.is_empty();
        let src = std::mem::take(&mut self.pending);
        self.text.reserve(
            self.decoder
                .max_utf8_buffer_length(src.len())
                .unwrap_or(src.len() * 3),
        );
        let (result, read, replaced) = self.decoder.decode_to_string(&src, &mut self.text, last);
        if replaced {
            return Err(self.bad_encoding());
        }
        self.pending = src[read..].to_vec();
        if result == CoderResult::InputEmpty && last {
            self.eof = true;
        }
        if self.text.contains('\0') {
            return Err(ImportError::new(
                "file",
                format!(
                    "binary data (a NUL character) near line {}: not a text file",
                    self.line_no + 1
                ),
            ));
        }
        Ok(())
    }

    fn bad_encoding(&self) -> ImportError {
        let what = if self.guessed_utf8 {
            "the file starts as UTF-8 but has bytes further on that are not UTF-8; save it \
             as UTF-8 throughout"
                .to_string()
        } else {
            format!("the file is not valid {}", self.encoding.name())
        };
        ImportError::new(
            "encoding",
            format!("{what} (near line {})", self.line_no + 1),
        )
    }
}

fn read_some<R: Read>(r: &mut R, buf: &mut [u8]) -> Result<usize, ImportError> {
    loop {
        match r.read(buf) {
            Ok(n) => return Ok(n),
            Err(e) if e.kind() == std::io::ErrorKind::Interrupted => continue,
            Err(e) => return Err(ImportError::new("file", format!("could not be read: {e}"))),
        }
    }
}

fn too_big(max: u64) -> ImportError {
    ImportError::new("file", format!("is larger than the limit of {max} bytes"))
}

/// (encoding, BOM length, guessed as UTF-8 without a BOM).
fn sniff_encoding(head: &[u8]) -> Result<(&'static Encoding, usize, bool), ImportError> {
    if head.starts_with(&[0xFF, 0xFE, 0, 0]) || head.starts_with(&[0, 0, 0xFE, 0xFF]) {
        return Err(ImportError::new(
            "encoding",
            "UTF-32 is not supported; save the file as UTF-8",
        ));
    }
    if let Some((enc, bom)) = Encoding::for_bom(head) {
        return Ok((enc, bom, false));
    }
    if head.contains(&0) {
        let zeros = |parity: usize| {
            head.iter()
                .skip(parity)
                .step_by(2)
                .filter(|&&b| b == 0)
                .count()
        };
        let half = head.len() / 2;
        let (even, odd) = (zeros(0), zeros(1));
        // Text in UTF-16 has NULs in every other byte, hardly ever in the others.
        if half > 0 && (even.max(odd) * 10 > half * 3 && even.min(odd) * 20 < half) {
            return Err(ImportError::new(
                "encoding",
                "looks like UTF-16 without a byte-order mark; save it as UTF-8, or as \
                 UTF-16 with a byte-order mark",
            ));
        }
        return Err(ImportError::new(
            "file",
            "contains binary data (NUL bytes): not a text export",
        ));
    }
    match std::str::from_utf8(head) {
        Ok(_) => Ok((UTF_8, 0, true)),
        // Only cut off mid-character at the end of the first chunk: still UTF-8.
        Err(e) if e.error_len().is_none() => Ok((UTF_8, 0, true)),
        Err(_) => Ok((WINDOWS_1252, 0, false)),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn lines(bytes: &[u8]) -> Result<(String, Vec<String>), ImportError> {
        let mut r = LineReader::new(bytes, Limits::default())?;
        let mut out = Vec::new();
        while let Some((_, l)) = r.next_line()? {
            out.push(l);
        }
        Ok((r.encoding_name().to_string(), out))
    }

    #[test]
    fn utf16_with_a_bom_is_decoded() {
        let mut le = vec![0xFF, 0xFE];
        let mut be = vec![0xFE, 0xFF];
        for u in "T;°C\r\n1;2".encode_utf16() {
            le.extend_from_slice(&u.to_le_bytes());
            be.extend_from_slice(&u.to_be_bytes());
        }
        assert_eq!(
            lines(&le).unwrap(),
            ("UTF-16LE".into(), vec!["T;°C".into(), "1;2".into()])
        );
        assert_eq!(
            lines(&be).unwrap().1,
            vec!["T;°C".to_string(), "1;2".into()]
        );
    }

    #[test]
    fn latin1_is_the_fallback_and_a_utf8_bom_is_dropped() {
        assert_eq!(lines(b"Temp \xb0C\n1").unwrap().1[0], "Temp °C");
        assert_eq!(lines(b"\xEF\xBB\xBFa\rb\n").unwrap().1, vec!["a", "b"]);
    }

    #[test]
    fn utf16_without_a_bom_and_binary_are_refused() {
        let e = lines(&[b'1', 0, b';', 0, b'2', 0]).unwrap_err();
        assert_eq!(e.field, "encoding");
        assert_eq!(
            lines(&[1, 2, 0, 0, 0, 0, 0, 9, 0, 0]).unwrap_err().field,
            "file"
        );
    }
}
