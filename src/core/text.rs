//! Free text from files as data, never markup or terminal control: the check made at load,
//! and the escaping each output needs (terminal, Markdown, XML).
//!
//! A case or profile is refused at load when a free-text field holds a character that could
//! change how other text is shown: C0 and C1 control characters (escape, carriage return,
//! line feed, tab, delete, …), the bidirectional controls that reorder text (U+061C,
//! U+200E, U+200F, U+202A to U+202E, U+2066 to U+2069) and the line and paragraph
//! separators U+2028 and U+2029. A tab is refused too, not turned into a space: what the
//! screen shows is then exactly what the file holds. Other format characters (the zero-width
//! joiners some scripts need, the soft hyphen) are kept.
//!
//! The output side escapes whatever reaches it anyway (text built by a program, file names):
//! [`printable`] for a terminal, a plain-text file or SVG text (the SVG writer escapes
//! `&`, `<`, `>` and quotes itself; control characters are not even allowed in XML),
//! [`markdown`] for a Markdown note, and [`quoted`] to echo a value in a one-line error,
//! cut to [`ECHO_CHARS`] characters.

use std::borrow::Cow;
use std::fmt::Write as _;

/// The most characters of a value an error message echoes; longer values are cut with `…`.
pub const ECHO_CHARS: usize = 60;

/// Why a character may not be in free text, in words; `None` when it may.
pub fn refused(c: char) -> Option<&'static str> {
    match c {
        '\t' => Some("a tab"),
        '\n' | '\r' | '\u{0b}' | '\u{0c}' | '\u{85}' | '\u{2028}' | '\u{2029}' => {
            Some("a line break")
        }
        '\u{1b}' => Some("an escape character"),
        '\u{0}'..='\u{1f}' | '\u{7f}'..='\u{9f}' => Some("a control character"),
        '\u{61c}' | '\u{200e}' | '\u{200f}' | '\u{202a}'..='\u{202e}' | '\u{2066}'..='\u{2069}' => {
            Some("a bidirectional control")
        }
        _ => None,
    }
}

/// The first refused character of `s` as a sentence: what it is, its code and where.
/// `None` when `s` is plain printable text on one line.
pub fn problem(s: &str) -> Option<String> {
    let (i, c, what) = s
        .chars()
        .enumerate()
        .find_map(|(i, c)| refused(c).map(|w| (i, c, w)))?;
    let fix = match c {
        '\t' => "use spaces",
        '\n' | '\r' | '\u{0b}' | '\u{0c}' | '\u{85}' | '\u{2028}' | '\u{2029}' => {
            "free text must be on one line"
        }
        '\u{61c}' | '\u{200e}' | '\u{200f}' | '\u{202a}'..='\u{202e}' | '\u{2066}'..='\u{2069}' => {
            "it can reorder the text shown; free text must be plain printable text"
        }
        _ => "free text must be plain printable text",
    };
    Some(format!(
        "contains {what} (U+{:04X}) at character {}; {fix}",
        u32::from(c),
        i + 1
    ))
}

/// `s` with every refused character written as a visible escape (`\u{1b}`), so the text can
/// go to a terminal or a plain-text file without moving the cursor, starting a line or
/// reordering what follows. Plain text comes back unchanged and unallocated.
pub fn printable(s: &str) -> Cow<'_, str> {
    if !s.chars().any(|c| refused(c).is_some()) {
        return Cow::Borrowed(s);
    }
    let mut out = String::with_capacity(s.len() + 8);
    for c in s.chars() {
        if refused(c).is_some() {
            let _ = write!(out, "\\u{{{:x}}}", u32::from(c));
        } else {
            out.push(c);
        }
    }
    Cow::Owned(out)
}

/// `s` for a one-line error: printable, cut to [`ECHO_CHARS`] characters with `…`, in
/// double quotes.
pub fn quoted(s: &str) -> String {
    format!("\"{}\"", cut(&printable(s), ECHO_CHARS))
}

/// A parser's message on one line for an error: line breaks become `; `, every quoted
/// value (in `"…"` or `` `…` ``) is cut to [`ECHO_CHARS`] characters, refused characters are
/// escaped, and the whole is cut to [`MESSAGE_CHARS`].
pub fn one_line(message: &str) -> String {
    let joined = message.trim().replace('\n', "; ");
    let mut out = String::with_capacity(joined.len().min(4 * MESSAGE_CHARS));
    let mut open: Option<char> = None;
    let mut inside = 0usize;
    for c in joined.chars() {
        match open {
            Some(q) if c == q => {
                open = None;
                out.push(c);
            }
            Some(_) => {
                inside += 1;
                if inside <= ECHO_CHARS {
                    out.push(c);
                } else if inside == ECHO_CHARS + 1 {
                    out.push('…');
                }
            }
            None => {
                if c == '"' || c == '`' {
                    open = Some(c);
                    inside = 0;
                }
                out.push(c);
            }
        }
    }
    cut(&printable(&out), MESSAGE_CHARS).into_owned()
}

/// The most characters of a parser's message kept in a one-line error.
pub const MESSAGE_CHARS: usize = 400;

/// The first `max` characters of `s`, with `…` when it was longer.
pub fn cut(s: &str, max: usize) -> Cow<'_, str> {
    match s.char_indices().nth(max) {
        None => Cow::Borrowed(s),
        Some((at, _)) => Cow::Owned(format!("{}…", &s[..at])),
    }
}

/// `s` as literal text inside a Markdown paragraph, heading or table cell: every character
/// that could start emphasis, code, a link, an image, raw HTML, an entity, a heading or a
/// cell edge is escaped with a backslash (CommonMark escapes any ASCII punctuation this
/// way), and refused characters are written as visible escapes, so a field can neither add
/// a line (no line, no block: no heading or list) nor turn into markup.
pub fn markdown(s: &str) -> String {
    let mut out = String::with_capacity(s.len() + 8);
    for c in s.chars() {
        match c {
            '\\' | '`' | '*' | '_' | '[' | ']' | '<' | '>' | '&' | '|' | '~' | '!' | '#' => {
                out.push('\\');
                out.push(c);
            }
            c if refused(c).is_some() => {
                let _ = write!(out, "\\\\u\\{{{:x}\\}}", u32::from(c));
            }
            c => out.push(c),
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn plain_text_passes_and_controls_are_named() {
        assert_eq!(problem("Bed 4, Zoë — ß 日本 ‍ok"), None);
        assert_eq!(
            problem("Bed\x1b]0;x\x07").as_deref(),
            Some("contains an escape character (U+001B) at character 4; free text must be plain printable text")
        );
        assert_eq!(
            problem("a\nPlan: all targets met").as_deref(),
            Some("contains a line break (U+000A) at character 2; free text must be on one line")
        );
        assert_eq!(
            problem("a\tb").as_deref(),
            Some("contains a tab (U+0009) at character 2; use spaces")
        );
        assert!(problem("abc\u{202e}fed").unwrap().contains("U+202E"));
        assert!(problem("x\u{9b}31m").unwrap().contains("U+009B"));
        assert!(problem("x\u{2029}").unwrap().contains("line break"));
        assert!(problem("x\r").unwrap().contains("U+000D"));
    }

    #[test]
    fn printable_shows_controls_as_escapes() {
        assert_eq!(printable("ok"), Cow::Borrowed("ok"));
        assert_eq!(
            printable("a\x1b[2Jb\nc\u{202e}"),
            "a\\u{1b}[2Jb\\u{a}c\\u{202e}"
        );
    }

    #[test]
    fn quoted_cuts_long_values() {
        let long = "x".repeat(10_000_000);
        let q = quoted(&long);
        assert_eq!(q.chars().count(), ECHO_CHARS + 3);
        assert!(q.ends_with("…\""));
        assert_eq!(quoted("oral"), "\"oral\"");
        assert_eq!(quoted("é".repeat(61).as_str()).chars().count(), 63);
    }

    #[test]
    fn parser_messages_are_cut_inside_quotes() {
        let long = format!(
            "invalid type: string \"{}\", expected f64",
            "A".repeat(1000)
        );
        let m = one_line(&long);
        assert_eq!(
            m,
            format!(
                "invalid type: string \"{}…\", expected f64",
                "A".repeat(ECHO_CHARS)
            )
        );
        assert_eq!(one_line("a\nb `x`"), "a; b `x`");
        assert_eq!(
            one_line(&"z".repeat(5000)).chars().count(),
            MESSAGE_CHARS + 1
        );
    }

    proptest::proptest! {
        #[test]
        fn escaped_text_never_carries_a_refused_character(s in "\\PC*|[\\x00-\\x{a0}\\x{2028}-\\x{206f}a-z]*") {
            proptest::prop_assert!(printable(&s).chars().all(|c| refused(c).is_none()));
            proptest::prop_assert!(markdown(&s).chars().all(|c| refused(c).is_none()));
            proptest::prop_assert_eq!(problem(&s).is_none(), printable(&s) == s.as_str());
            proptest::prop_assert!(quoted(&s).chars().count() <= ECHO_CHARS + 3);
            proptest::prop_assert!(one_line(&s).chars().all(|c| refused(c).is_none()));
        }
    }

    #[test]
    fn markdown_cannot_open_markup() {
        assert_eq!(
            markdown("<img src=x onerror=alert(1)> *b* [l](u) | `c` a&b"),
            "\\<img src=x onerror=alert(1)\\> \\*b\\* \\[l\\](u) \\| \\`c\\` a\\&b"
        );
        assert_eq!(markdown("# h"), "\\# h");
        assert!(!markdown("a\nb").contains('\n'));
    }
}
