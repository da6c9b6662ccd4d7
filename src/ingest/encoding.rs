//! Turning the bytes of a user's file into text.
//!
//! A byte-order mark decides first (UTF-8, UTF-16 LE, UTF-16 BE). Without one the bytes must be
//! UTF-8; if they are not, they are read as Windows-1252, the encoding spreadsheet programs on
//! Windows still write, and the run summary says so. `--encoding` forces one choice. Decoding is
//! done by `encoding_rs`; this file only decides which decoder to use and reports it.

use crate::error::{Error, Location, Result};
use encoding_rs::{Encoding, UTF_16BE, UTF_16LE, UTF_8, WINDOWS_1252};

/// The encodings a user can force with `--encoding`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum, serde::Serialize)]
pub enum EncodingChoice {
    #[value(name = "utf-8")]
    Utf8,
    #[value(name = "utf-16le")]
    Utf16Le,
    #[value(name = "utf-16be")]
    Utf16Be,
    #[value(name = "windows-1252")]
    Windows1252,
}

impl EncodingChoice {
    fn encoding(self) -> &'static Encoding {
        match self {
            EncodingChoice::Utf8 => UTF_8,
            EncodingChoice::Utf16Le => UTF_16LE,
            EncodingChoice::Utf16Be => UTF_16BE,
            EncodingChoice::Windows1252 => WINDOWS_1252,
        }
    }
}

/// Decoded text and a sentence for the run summary. UTF-8 input is borrowed, not copied (at
/// 10M rows a copy was another 290 MB of fresh memory).
#[derive(Debug, Clone)]
pub struct Decoded<'a> {
    pub text: std::borrow::Cow<'a, str>,
    pub description: String,
    /// The encoding the text was read in (None for spreadsheets and Parquet).
    pub encoding: Option<EncodingChoice>,
}

pub fn decode<'a>(
    bytes: &'a [u8],
    forced: Option<EncodingChoice>,
    file: &str,
) -> Result<Decoded<'a>> {
    if let Some(choice) = forced {
        let encoding = choice.encoding();
        let (text, _, had_errors) = encoding.decode(bytes);
        if had_errors {
            return Err(Error::bad_input(
                Location::file(file),
                format!("bytes that are not valid {}", encoding.name()),
                format!("a file encoded as {}", encoding.name()),
                "check the encoding the file was saved in, or leave out --encoding to let levelfield detect it",
            ));
        }
        return Ok(Decoded {
            text: strip_bom(text.into_owned()).into(),
            description: format!("{} (forced)", encoding.name()),
            encoding: Some(choice),
        });
    }
    if let Some((encoding, bom_len)) = Encoding::for_bom(bytes) {
        let (text, had_errors) = encoding.decode_without_bom_handling(&bytes[bom_len..]);
        if had_errors {
            return Err(Error::bad_input(
                Location::file(file),
                format!(
                    "a {} byte-order mark followed by invalid bytes",
                    encoding.name()
                ),
                format!("text in {}", encoding.name()),
                "re-save the file as UTF-8",
            ));
        }
        let choice = if encoding == encoding_rs::UTF_16LE {
            EncodingChoice::Utf16Le
        } else if encoding == encoding_rs::UTF_16BE {
            EncodingChoice::Utf16Be
        } else {
            EncodingChoice::Utf8
        };
        return Ok(Decoded {
            // Borrowed for UTF-8 after its mark (a spreadsheet's export), decoded for UTF-16.
            text,
            description: format!("{} (byte-order mark)", encoding.name()),
            encoding: Some(choice),
        });
    }
    match std::str::from_utf8(bytes) {
        Ok(text) => Ok(Decoded {
            text: text.into(),
            description: "UTF-8".into(),
            encoding: Some(EncodingChoice::Utf8),
        }),
        // Valid multi-byte UTF-8 before the bad byte means a damaged UTF-8 file, not a legacy
        // encoding: reading it as Windows-1252 would garble every accented name.
        Err(e) if has_multibyte_utf8(&bytes[..e.valid_up_to()]) => {
            let line = bytes[..e.valid_up_to()]
                .iter()
                .filter(|&&b| b == b'\n')
                .count()
                + 1;
            Err(Error::bad_input(
                Location::line(file, line),
                "bytes that are not valid UTF-8 in a file that is otherwise UTF-8",
                "text in one encoding",
                "re-save the file as UTF-8, or pass --encoding windows-1252 if it really is a legacy file",
            ))
        }
        Err(_) => {
            let (text, _, _) = WINDOWS_1252.decode(bytes);
            Ok(Decoded {
                text: text.into_owned().into(),
                description:
                    "windows-1252 (the file is not valid UTF-8; pass --encoding to choose another)"
                        .into(),
                encoding: Some(EncodingChoice::Windows1252),
            })
        }
    }
}

fn has_multibyte_utf8(valid: &[u8]) -> bool {
    valid.iter().any(|&b| b >= 0x80)
}

fn strip_bom(text: String) -> String {
    match text.strip_prefix('\u{feff}') {
        Some(rest) => rest.to_string(),
        None => text,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn utf8_with_and_without_bom() {
        let plain = decode("país,1\n".as_bytes(), None, "f").unwrap();
        assert_eq!(plain.text, "país,1\n");
        let mut with_bom = vec![0xEF, 0xBB, 0xBF];
        with_bom.extend_from_slice("país,1\n".as_bytes());
        assert_eq!(decode(&with_bom, None, "f").unwrap().text, "país,1\n");
    }

    #[test]
    fn utf16_with_bom() {
        let mut le = vec![0xFF, 0xFE];
        for unit in "Côte,1".encode_utf16() {
            le.extend_from_slice(&unit.to_le_bytes());
        }
        assert_eq!(decode(&le, None, "f").unwrap().text, "Côte,1");
        let mut be = vec![0xFE, 0xFF];
        for unit in "Côte,1".encode_utf16() {
            be.extend_from_slice(&unit.to_be_bytes());
        }
        assert_eq!(decode(&be, None, "f").unwrap().text, "Côte,1");
    }

    #[test]
    fn windows_1252_fallback_is_reported() {
        // 0xF4 is "ô" in Windows-1252 (the code page as published by Microsoft and WHATWG).
        let bytes = b"C\xF4te d'Ivoire,1\n";
        let decoded = decode(bytes, None, "f").unwrap();
        assert_eq!(decoded.text, "Côte d'Ivoire,1\n");
        assert!(decoded.description.contains("windows-1252"));
    }

    #[test]
    fn forced_encoding_that_does_not_fit_is_an_error() {
        let err = decode(b"\xF4", Some(EncodingChoice::Utf8), "in.csv").unwrap_err();
        assert!(err.to_string().contains("in.csv"));
    }
}
