//! A position-tracking reader over the bytes of an MSH file, built on `nom` parsers.
//!
//! Every read either succeeds and advances, or returns a [`MeshError::Parse`] that names the
//! file, the location (line and column for ASCII files, byte offset for binary files), the
//! section being read and what was expected. Nothing here indexes out of range or panics on
//! any input.

use nom::bytes::complete::{tag, take_till, take_while, take_while1};
use nom::character::complete::{i64 as text_i64, u64 as text_u64};
use nom::combinator::all_consuming;
use nom::number::complete::{double, le_f64, le_i32, le_u64};
use nom::{IResult, Parser};

use crate::error::{Location, MeshError};

/// Result of a raw `nom` parser over bytes.
type NomResult<'a, T> = IResult<&'a [u8], T, nom::error::Error<&'a [u8]>>;

/// How the numeric data of the file is stored (MSH `file-type` 0 or 1).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum Encoding {
    /// Numbers written as text, separated by white space.
    Ascii,
    /// Numbers stored as little-endian binary (`int` 4 bytes, `size_t` and `double` 8 bytes).
    Binary,
}

/// Turns byte offsets into error locations; kept after parsing for errors found while building.
#[derive(Clone, Copy)]
pub(crate) struct Locator<'a> {
    full: &'a [u8],
    file: &'a str,
    encoding: Encoding,
}

impl<'a> Locator<'a> {
    /// Location of a byte offset: line and column (1-based, in bytes) for ASCII files, the
    /// offset itself for binary files.
    pub(crate) fn location(&self, offset: usize) -> Location {
        match self.encoding {
            Encoding::Binary => Location::Byte(offset),
            Encoding::Ascii => {
                let before = self.full.get(..offset).unwrap_or(self.full);
                let line = 1 + before.iter().filter(|&&b| b == b'\n').count();
                let line_start = before
                    .iter()
                    .rposition(|&b| b == b'\n')
                    .map_or(0, |p| p + 1);
                Location::Line {
                    line,
                    column: before.len() - line_start + 1,
                }
            }
        }
    }

    /// A parse error at a byte offset.
    pub(crate) fn error(&self, offset: usize, section: &str, message: String) -> MeshError {
        MeshError::Parse {
            file: self.file.to_string(),
            location: self.location(offset),
            section: section.to_string(),
            message,
        }
    }
}

/// A cursor over the whole file: the remaining input, the section being read and the encoding.
pub(crate) struct Cursor<'a> {
    full: &'a [u8],
    rest: &'a [u8],
    file: &'a str,
    encoding: Encoding,
    section: String,
}

/// Show at most this many bytes of an offending token in a message.
const MAX_SHOWN: usize = 24;

/// A token as text for a message, shortened and with invalid UTF-8 replaced.
pub(crate) fn show(token: &[u8]) -> String {
    let cut = token.get(..MAX_SHOWN).unwrap_or(token);
    let mut s = String::from_utf8_lossy(cut).into_owned();
    if token.len() > MAX_SHOWN {
        s.push('…');
    }
    s
}

fn is_space(b: u8) -> bool {
    b.is_ascii_whitespace()
}

impl<'a> Cursor<'a> {
    /// A cursor at the start of `bytes`; the encoding is ASCII until the header says otherwise.
    pub(crate) fn new(bytes: &'a [u8], file: &'a str) -> Self {
        Cursor {
            full: bytes,
            rest: bytes,
            file,
            encoding: Encoding::Ascii,
            section: "$MeshFormat".to_string(),
        }
    }

    /// The error locator for this file (uses the encoding set so far).
    pub(crate) fn locator(&self) -> Locator<'a> {
        Locator {
            full: self.full,
            file: self.file,
            encoding: self.encoding,
        }
    }

    pub(crate) fn encoding(&self) -> Encoding {
        self.encoding
    }

    pub(crate) fn set_encoding(&mut self, encoding: Encoding) {
        self.encoding = encoding;
    }

    /// Name the section being read (`"$Nodes"`), used in every error message.
    pub(crate) fn set_section(&mut self, section: &str) {
        self.section = section.to_string();
    }

    /// Byte offset of the cursor from the start of the file.
    pub(crate) fn offset(&self) -> usize {
        self.full.len() - self.rest.len()
    }

    /// Bytes left to read.
    pub(crate) fn remaining(&self) -> usize {
        self.rest.len()
    }

    /// Size sanity check of a count read from the file at byte offset `at`, before anything is
    /// allocated for it: `count` items of at least `min_bytes` bytes each must fit in the bytes
    /// that remain, otherwise the file is refused with a located error. Returns the count.
    pub(crate) fn checked_count(
        &self,
        count: u64,
        min_bytes: usize,
        at: usize,
        what: &str,
    ) -> Result<usize, MeshError> {
        let fit = self.remaining() / min_bytes.max(1);
        match usize::try_from(count) {
            Ok(c) if c <= fit => Ok(c),
            _ => Err(self.error_at(
                at,
                format!(
                    "the file announces {count} {what}, but only {} bytes follow, room for at \
                     most {fit} (each takes at least {min_bytes} bytes)",
                    self.remaining()
                ),
            )),
        }
    }

    /// An error at a byte offset in the current section.
    pub(crate) fn error_at(&self, offset: usize, message: String) -> MeshError {
        self.locator().error(offset, &self.section, message)
    }

    /// An error at the cursor in the current section.
    pub(crate) fn error(&self, message: String) -> MeshError {
        self.error_at(self.offset(), message)
    }

    fn truncated(&self, what: &str) -> MeshError {
        self.error(format!(
            "unexpected end of file: expected more data in section {} ({what})",
            self.section
        ))
    }

    /// True when only white space is left.
    pub(crate) fn at_end(&mut self) -> bool {
        self.skip_space();
        self.rest.is_empty()
    }

    /// Skip white space (spaces, tabs, line breaks).
    pub(crate) fn skip_space(&mut self) {
        let parsed: NomResult<'a, &'a [u8]> = take_while(is_space)(self.rest);
        if let Ok((rest, _)) = parsed {
            self.rest = rest;
        }
    }

    /// Skip white space in ASCII files (so that the offset points at the next token); does
    /// nothing in binary files, where every byte is data.
    pub(crate) fn skip_if_ascii(&mut self) {
        if self.encoding == Encoding::Ascii {
            self.skip_space();
        }
    }

    /// The next white-space separated token and its offset.
    pub(crate) fn token(&mut self, what: &str) -> Result<(usize, &'a [u8]), MeshError> {
        self.skip_space();
        let start = self.offset();
        let parsed: NomResult<'a, &'a [u8]> = take_while1(|b| !is_space(b))(self.rest);
        match parsed {
            Ok((rest, tok)) => {
                self.rest = rest;
                Ok((start, tok))
            }
            Err(_) => Err(self.truncated(what)),
        }
    }

    /// Parse the next token completely with `parser`, or explain what was expected.
    fn text_number<T>(
        &mut self,
        what: &str,
        kind: &str,
        parser: impl Fn(&'a [u8]) -> NomResult<'a, T>,
    ) -> Result<(usize, T), MeshError> {
        let (start, tok) = self.token(what)?;
        match all_consuming(parser).parse(tok) {
            Ok((_, v)) => Ok((start, v)),
            Err(_) => {
                let hint = if tok.starts_with(b"$") {
                    " (the section ends before everything its counts announce was read)"
                } else {
                    ""
                };
                let found = show(tok);
                Err(self.error_at(
                    start,
                    format!("expected {what} ({kind}), found '{found}'{hint}"),
                ))
            }
        }
    }

    /// A non-negative integer written as text.
    pub(crate) fn text_uint(&mut self, what: &str) -> Result<u64, MeshError> {
        self.text_number(what, "a non-negative integer", text_u64)
            .map(|(_, v)| v)
    }

    /// A signed integer written as text.
    pub(crate) fn text_int(&mut self, what: &str) -> Result<i64, MeshError> {
        self.text_number(what, "an integer", text_i64)
            .map(|(_, v)| v)
    }

    /// A finite real number written as text.
    pub(crate) fn text_real(&mut self, what: &str) -> Result<f64, MeshError> {
        let (start, v) = self.text_number(what, "a real number", double)?;
        if v.is_finite() {
            Ok(v)
        } else {
            Err(self.error_at(
                start,
                format!("expected {what} (a finite real number), found {v}"),
            ))
        }
    }

    /// Expect the exact token `marker` (such as `$EndNodes`).
    pub(crate) fn expect_token(&mut self, marker: &str) -> Result<(), MeshError> {
        let (start, tok) = self.token(&format!("'{marker}'"))?;
        if tok == marker.as_bytes() {
            Ok(())
        } else {
            Err(self.error_at(start, format!("expected '{marker}', found '{}'", show(tok))))
        }
    }

    /// Expect the end marker of a section after its announced content (`after` says what was
    /// read, so that a count that does not match the data is explained).
    pub(crate) fn expect_end(&mut self, marker: &str, after: &str) -> Result<(), MeshError> {
        let (start, tok) = self.token(&format!("'{marker}'"))?;
        if tok == marker.as_bytes() {
            Ok(())
        } else {
            Err(self.error_at(
                start,
                format!("expected '{marker}' after {after}, found '{}'", show(tok)),
            ))
        }
    }

    /// Skip blanks and an optional carriage return, then require a line feed; used where binary
    /// data starts right after a text line.
    pub(crate) fn end_of_line(&mut self, what: &str) -> Result<(), MeshError> {
        let parsed: NomResult<'a, &'a [u8]> =
            take_while(|b| b == b' ' || b == b'\t' || b == b'\r')(self.rest);
        if let Ok((rest, _)) = parsed {
            self.rest = rest;
        }
        let newline: NomResult<'a, &'a [u8]> = tag(&b"\n"[..])(self.rest);
        match newline {
            Ok((rest, _)) => {
                self.rest = rest;
                Ok(())
            }
            Err(_) if self.rest.is_empty() => Err(self.truncated(what)),
            Err(_) => {
                let (_, tok) = take_till::<_, _, nom::error::Error<&[u8]>>(is_space)(self.rest)
                    .unwrap_or((self.rest, self.rest));
                Err(self.error(format!(
                    "expected the end of the line before {what}, found '{}'",
                    show(tok)
                )))
            }
        }
    }

    /// A string in double quotes on the current line (names in `$PhysicalNames`).
    pub(crate) fn quoted(&mut self, what: &str) -> Result<String, MeshError> {
        self.skip_space();
        let start = self.offset();
        let open: NomResult<'a, &'a [u8]> = tag(&b"\""[..])(self.rest);
        let Ok((after_open, _)) = open else {
            if self.rest.is_empty() {
                return Err(self.truncated(what));
            }
            let (_, tok) = self.token(what)?;
            return Err(self.error_at(
                start,
                format!("expected {what} in double quotes, found '{}'", show(tok)),
            ));
        };
        let body: NomResult<'a, &'a [u8]> = take_till(|b| b == b'"' || b == b'\n')(after_open);
        let Ok((after_body, text)) = body else {
            return Err(self.truncated(what));
        };
        let close: NomResult<'a, &'a [u8]> = tag(&b"\""[..])(after_body);
        match close {
            Ok((rest, _)) => {
                self.rest = rest;
                Ok(String::from_utf8_lossy(text).into_owned())
            }
            Err(_) => Err(self.error_at(
                start,
                format!("{what} has no closing double quote on its line"),
            )),
        }
    }

    fn binary<T>(
        &mut self,
        what: &str,
        parser: impl Fn(&'a [u8]) -> NomResult<'a, T>,
    ) -> Result<T, MeshError> {
        match parser(self.rest) {
            Ok((rest, v)) => {
                self.rest = rest;
                Ok(v)
            }
            Err(_) => Err(self.truncated(what)),
        }
    }

    /// A 4-byte little-endian signed integer.
    pub(crate) fn bin_i32(&mut self, what: &str) -> Result<i32, MeshError> {
        self.binary(what, le_i32)
    }

    /// Look at the next 4-byte integer without consuming it.
    pub(crate) fn peek_bin_i32(&self) -> Option<i32> {
        le_i32::<&[u8], nom::error::Error<&[u8]>>(self.rest)
            .ok()
            .map(|(_, v)| v)
    }

    /// Look at the next 8-byte unsigned integer without consuming it.
    pub(crate) fn peek_bin_u64(&self) -> Option<u64> {
        le_u64::<&[u8], nom::error::Error<&[u8]>>(self.rest)
            .ok()
            .map(|(_, v)| v)
    }

    /// Look at the next text token as an unsigned integer without consuming it.
    pub(crate) fn peek_text_uint(&self) -> Option<u64> {
        let trimmed: NomResult<'a, &'a [u8]> = take_while(is_space)(self.rest);
        let (rest, _) = trimmed.ok()?;
        let tok: NomResult<'a, &'a [u8]> = take_while1(|b| !is_space(b))(rest);
        let (_, tok) = tok.ok()?;
        all_consuming(text_u64::<&[u8], nom::error::Error<&[u8]>>)
            .parse(tok)
            .ok()
            .map(|(_, v)| v)
    }

    /// An `int` field: text or 4-byte binary depending on the encoding.
    pub(crate) fn int(&mut self, what: &str) -> Result<i64, MeshError> {
        match self.encoding {
            Encoding::Ascii => self.text_int(what),
            Encoding::Binary => self.bin_i32(what).map(i64::from),
        }
    }

    /// A `size_t` field (8 bytes in binary files).
    pub(crate) fn size(&mut self, what: &str) -> Result<u64, MeshError> {
        match self.encoding {
            Encoding::Ascii => self.text_uint(what),
            Encoding::Binary => self.binary(what, le_u64),
        }
    }

    /// A `double` field; must be finite.
    pub(crate) fn real(&mut self, what: &str) -> Result<f64, MeshError> {
        match self.encoding {
            Encoding::Ascii => self.text_real(what),
            Encoding::Binary => {
                let start = self.offset();
                let v = self.binary(what, le_f64)?;
                if v.is_finite() {
                    Ok(v)
                } else {
                    Err(self.error_at(
                        start,
                        format!("expected {what} (a finite real number), found {v}"),
                    ))
                }
            }
        }
    }

    /// Skip an unknown section whose start marker `$name` was just read: move past the line
    /// that holds `$Endname`.
    pub(crate) fn skip_section(&mut self, name: &str, start: usize) -> Result<(), MeshError> {
        let end = format!("$End{name}");
        let pattern = end.as_bytes();
        let mut from = 0;
        while let Some(pos) = find(self.rest.get(from..).unwrap_or(&[]), pattern) {
            let at = from + pos;
            let before_ok = at == 0
                || self
                    .rest
                    .get(at - 1)
                    .is_some_and(|&b| b == b'\n' || b == b'\r');
            let after = at + pattern.len();
            let after_ok = self.rest.get(after).is_none_or(|&b| is_space(b));
            if before_ok && after_ok {
                self.rest = self.rest.get(after..).unwrap_or(&[]);
                return Ok(());
            }
            from = at + 1;
        }
        Err(self.error_at(start, format!("section ${name} is not closed by '{end}'")))
    }
}

/// First position of `needle` in `haystack`.
fn find(haystack: &[u8], needle: &[u8]) -> Option<usize> {
    if needle.is_empty() {
        return Some(0);
    }
    haystack.windows(needle.len()).position(|w| w == needle)
}
