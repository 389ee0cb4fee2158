//! Reading one profile's TOML text: parse, validate, and name the line and field of any fault.

use crate::core::error::Error;
use crate::profiles::schema::{FieldProblem, Profile};

/// Parse and validate a profile's text. `file` names it in errors.
///
/// # Errors
/// A syntax error, an unknown or missing field, a wrong type or a failed check, as
/// `FILE: line N: field F: what is wrong`.
pub fn parse_profile(text: &str, file: &str) -> Result<Profile, Error> {
    let de = toml::Deserializer::parse(text).map_err(|e| {
        Error::Syntax {
            line: line_of_span(text, e.span()),
            message: one_line(e.message()),
        }
        .in_file(file)
    })?;
    let profile: Profile = serde_path_to_error::deserialize(de).map_err(|e| {
        let field = field_of(e.path());
        let inner = e.inner();
        let line = line_of_span(text, inner.span());
        let message = if field.is_empty() {
            one_line(inner.message())
        } else {
            format!("field {field}: {}", one_line(inner.message()))
        };
        Error::Syntax { line, message }.in_file(file)
    })?;
    if let Some(e) = text_problem(text) {
        return Err(e.in_file(file));
    }
    profile
        .validate()
        .map_err(|p| problem_error(text, &p).in_file(file))?;
    Ok(profile)
}

/// The first text in a profile that could change how other text is shown (see
/// `core::text`): in any key or string value, named by its field; or, outside strings (a
/// comment, shown by `ebb profiles show NAME --toml`), named by its line.
fn text_problem(text: &str) -> Option<Error> {
    fn walk(value: &toml::Value, field: &str) -> Option<FieldProblem> {
        let at = |f: String, why: String| {
            Some(FieldProblem {
                field: f,
                message: why,
            })
        };
        match value {
            toml::Value::String(s) => {
                crate::core::text::problem(s).and_then(|w| at(field.into(), w))
            }
            toml::Value::Array(items) => items
                .iter()
                .enumerate()
                .find_map(|(i, v)| walk(v, &format!("{field}[{}]", i + 1))),
            toml::Value::Table(t) => t.iter().find_map(|(k, v)| {
                let f = if field.is_empty() {
                    k.clone()
                } else {
                    format!("{field}.{k}")
                };
                match crate::core::text::problem(k) {
                    Some(w) => at(
                        crate::core::text::printable(&f).into_owned(),
                        format!("the key {w}"),
                    ),
                    None => walk(v, &f),
                }
            }),
            _ => None,
        }
    }
    if let Ok(table) = toml::from_str::<toml::Table>(text) {
        if let Some(p) = walk(&toml::Value::Table(table), "") {
            return Some(problem_error(text, &p));
        }
    }
    let ok = |c: char| c == '\n' || c == '\t' || c == '\r';
    text.lines().enumerate().find_map(|(i, line)| {
        let bad = line.trim_end_matches('\r').chars().find(|&c| !ok(c) && crate::core::text::refused(c).is_some())?;
        Some(Error::Syntax {
            line: i + 1,
            message: format!(
                "holds U+{:04X}, which could change how other text is shown; a profile must be plain text",
                u32::from(bad)
            ),
        })
    })
}

fn one_line(s: &str) -> String {
    crate::core::text::one_line(s)
}

fn line_of_span(text: &str, span: Option<std::ops::Range<usize>>) -> usize {
    span.map(|s| text[..s.start.min(text.len())].matches('\n').count() + 1)
        .unwrap_or(1)
}

/// A serde path as ebb writes fields: dotted keys, array items counted from 1.
fn field_of(path: &serde_path_to_error::Path) -> String {
    let mut out = String::new();
    for seg in path.iter() {
        match seg {
            serde_path_to_error::Segment::Seq { index } => {
                out.push_str(&format!("[{}]", index + 1));
            }
            serde_path_to_error::Segment::Map { key } => {
                if !out.is_empty() {
                    out.push('.');
                }
                out.push_str(key);
            }
            serde_path_to_error::Segment::Enum { variant } => {
                if !out.is_empty() {
                    out.push('.');
                }
                out.push_str(variant);
            }
            serde_path_to_error::Segment::Unknown => {}
        }
    }
    if out == "." {
        String::new()
    } else {
        out
    }
}

fn problem_error(text: &str, p: &FieldProblem) -> Error {
    Error::Syntax {
        line: locate(text, &p.field).unwrap_or(1),
        message: format!("field {}: {}", p.field, p.message),
    }
}

/// One step of a field path.
#[derive(Debug, PartialEq)]
enum Step<'a> {
    Key(&'a str),
    Item(usize),
}

fn steps(field: &str) -> Vec<Step<'_>> {
    let mut out = Vec::new();
    for part in field.split('.') {
        match part.find('[') {
            Some(i) => {
                out.push(Step::Key(&part[..i]));
                let n = part[i + 1..].trim_end_matches(']').parse().unwrap_or(1);
                out.push(Step::Item(n));
            }
            None => out.push(Step::Key(part)),
        }
    }
    out
}

/// The line of a field in a profile's text, found through the TOML parser's spans
/// (`toml_edit`): the line of its key, or of its table's header when the table is there
/// and the key is not. `None` when the table or row is not there either.
fn locate(text: &str, field: &str) -> Option<usize> {
    let doc = toml_edit::Document::parse(text).ok()?;
    let line = |span: Option<std::ops::Range<usize>>| span.map(|s| line_of_span(text, Some(s)));
    let mut item = doc.as_item();
    let mut at: Option<usize> = None;
    for (i, step) in steps(field).into_iter().enumerate() {
        match step {
            Step::Key(k) => {
                let Some((key, next)) = item.as_table_like().and_then(|t| t.get_key_value(k))
                else {
                    return if i == 0 { None } else { at };
                };
                at = line(key.span()).or(at);
                item = next;
            }
            Step::Item(n) => {
                item = item.get(n.checked_sub(1)?)?;
                at = line(item.as_table().and_then(toml_edit::Table::span)).or(at);
            }
        }
    }
    at
}

#[cfg(test)]
mod tests {
    use super::*;

    const TEXT: &str = "schema = 1\nhalf_life_h = { low = 1.0 }\n\n[volume]\nweight = \"actual\"\nl_per_kg = 2\n\n[[strategy]]\nname = \"a\"\n\n[[strategy]]\nname = \"b\"\npeak = 3\n";

    #[test]
    fn fields_are_found_on_their_lines() {
        assert_eq!(locate(TEXT, "half_life_h"), Some(2));
        assert_eq!(locate(TEXT, "volume.l_per_kg"), Some(6));
        assert_eq!(locate(TEXT, "strategy[2].peak"), Some(13));
        assert_eq!(locate(TEXT, "strategy[1].peak"), Some(8));
        assert_eq!(locate(TEXT, "strategy[3].peak"), None);
        assert_eq!(locate(TEXT, "nothing"), None);
    }
}
