//! How ebb knows a note or a plot on disk is its own and unedited: the last line of every
//! note and plot ebb writes to a file is a check line holding a checksum of everything
//! before it (`ebb-check: 0123456789abcdef` in a plain-text note; the same inside an XML or
//! HTML comment, `<!-- ebb-check: … -->`, in a Markdown note or an SVG plot, where it does
//! not show).

/// How the check line is written.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Style {
    /// A plain line.
    Plain,
    /// Inside `<!-- -->` (Markdown, SVG).
    Comment,
}

/// What a file on disk is, to ebb.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Claim {
    /// Written by ebb and unchanged since.
    Ours,
    /// Written by ebb, then edited.
    OursEdited,
    /// Not written by ebb (no check line).
    Foreign,
}

const WORD: &str = "ebb-check: ";

/// FNV-1a, 64 bits: stable across versions and machines (the standard library's hasher is
/// not). It tells edits apart, not attackers.
fn checksum(bytes: &[u8]) -> u64 {
    bytes.iter().fold(0xcbf2_9ce4_8422_2325, |h, b| {
        (h ^ u64::from(*b)).wrapping_mul(0x0000_0100_0000_01b3)
    })
}

/// `text` with ebb's check line added at the end.
pub fn stamp(text: &str, style: Style) -> String {
    let mut body = text.to_string();
    if !body.ends_with('\n') {
        body.push('\n');
    }
    let sum = checksum(body.as_bytes());
    match style {
        Style::Plain => format!("{body}{WORD}{sum:016x}\n"),
        Style::Comment => format!("{body}<!-- {WORD}{sum:016x} -->\n"),
    }
}

/// The checksum a line holds, if it is a check line.
fn check_of(line: &[u8]) -> Option<u64> {
    let line = std::str::from_utf8(line).ok()?.trim_end_matches('\r');
    let inner = line
        .strip_prefix("<!-- ")
        .and_then(|l| l.strip_suffix(" -->"))
        .unwrap_or(line);
    let hex = inner.strip_prefix(WORD)?;
    (hex.len() == 16)
        .then(|| u64::from_str_radix(hex, 16).ok())
        .flatten()
}

/// Whether `bytes` (a file's content) were written by ebb, and left as written. A file
/// with a check line anywhere is ebb's; it is unedited only when the line is the last and
/// its checksum matches everything before it.
pub fn claim(bytes: &[u8]) -> Claim {
    let mut start = 0;
    let mut found: Option<(usize, usize, u64)> = None;
    for line in bytes.split_inclusive(|b| *b == b'\n') {
        let body = line.strip_suffix(b"\n").unwrap_or(line);
        if let Some(sum) = check_of(body) {
            found = Some((start, start + line.len(), sum));
        }
        start += line.len();
    }
    match found {
        None => Claim::Foreign,
        Some((at, end, sum)) if end == bytes.len() && checksum(&bytes[..at]) == sum => Claim::Ours,
        Some(_) => Claim::OursEdited,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_stamped_text_is_ours_until_edited() {
        for style in [Style::Plain, Style::Comment] {
            let text = stamp("Note\nline two\n", style);
            assert_eq!(claim(text.as_bytes()), Claim::Ours);
            let edited = text.replace("two", "2");
            assert_eq!(claim(edited.as_bytes()), Claim::OursEdited);
            let added = format!("{text}Seen.\n");
            assert_eq!(claim(added.as_bytes()), Claim::OursEdited);
        }
        assert!(stamp("a", Style::Plain).starts_with("a\nebb-check: "));
        assert!(stamp("<svg/>", Style::Comment).ends_with(" -->\n"));
        assert_eq!(claim(b"someone's notes\n"), Claim::Foreign);
        assert_eq!(claim(b""), Claim::Foreign);
        assert_eq!(claim(b"ebb-check: zz\n"), Claim::Foreign);
    }

    #[test]
    fn the_checksum_is_fnv_1a() {
        // FNV-1a 64 test vectors from the algorithm's authors (Fowler, Noll, Vo; the
        // reference test suite): "" and "a".
        assert_eq!(checksum(b""), 0xcbf2_9ce4_8422_2325);
        assert_eq!(checksum(b"a"), 0xaf63_dc4c_8601_ec8c);
    }
}
