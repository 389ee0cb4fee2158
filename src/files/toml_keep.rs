//! Writing a case back as TOML without losing what the pharmacist wrote: the case in the
//! canonical layout (tables and fields in a fixed order), with every `#` comment of the text
//! it was read from carried onto the same table, row or field, through a format-preserving
//! TOML editor (`toml_edit`). A comment whose field or row is gone is kept at the end of the
//! file under a line that says so.

use toml_edit::{DocumentMut, Item, Table};

use crate::core::casefile::CaseFile;

/// The line in front of comments whose field or row is no longer in the case.
pub const ORPHANS_HEADING: &str =
    "# Comments from fields or rows no longer in this case (kept by ebb):";

/// The case as TOML, in the canonical layout, keeping the comments of `original` (the text
/// the case was read from; `None` for a new case). Always ends with a newline.
///
/// # Errors
/// A value TOML cannot write (a NaN or an infinity), in words.
pub fn render(file: &CaseFile, original: Option<&str>) -> Result<String, String> {
    render_checked(file, original).map(|(text, _)| text)
}

/// As `render`, and whether comments of `original` could not be kept (the text with them did
/// not read back as the same case, so the canonical text without them is returned).
///
/// # Errors
/// A value TOML cannot write (a NaN or an infinity), in words.
pub fn render_checked(file: &CaseFile, original: Option<&str>) -> Result<(String, bool), String> {
    let canonical = file.to_toml().map_err(|e| e.to_string())?;
    let (mut text, lost) =
        match original.and_then(|o| o.parse::<DocumentMut>().ok().map(|d| (o, d))) {
            None => (canonical, false),
            Some((raw, old)) => {
                let kept = keep_comments(raw, &old, &canonical);
                // The comments must not change the case: read it back, or fall back.
                match kept {
                    Some(t) if CaseFile::parse(&t).ok().as_ref() == Some(file) => (t, false),
                    _ => (canonical, has_comments(raw)),
                }
            }
        };
    if !text.ends_with('\n') {
        text.push('\n');
    }
    Ok((text, lost))
}

/// Whether `text` holds a TOML comment (outside strings).
pub fn has_comments(text: &str) -> bool {
    match text.parse::<DocumentMut>() {
        Ok(doc) => {
            let mut found = Vec::new();
            collect_table(doc.as_table(), &mut found);
            !found.is_empty() || !comment_lines(doc.trailing().as_str().unwrap_or("")).is_empty()
        }
        Err(_) => false,
    }
}

fn keep_comments(raw: &str, old: &DocumentMut, canonical: &str) -> Option<String> {
    let mut doc = canonical.parse::<DocumentMut>().ok()?;
    // The block of comments at the very top of the file stays at the top.
    let head: Vec<&str> = raw
        .lines()
        .take_while(|l| l.trim().is_empty() || l.trim_start().starts_with('#'))
        .filter(|l| l.trim_start().starts_with('#'))
        .collect();
    let mut orphans = Vec::new();
    carry_table(old.as_table(), doc.as_table_mut(), &head, &mut orphans);
    let mut trailing = comment_lines(old.trailing().as_str().unwrap_or(""));
    if !orphans.is_empty() {
        trailing.insert(0, ORPHANS_HEADING.to_string());
        trailing.splice(1..1, orphans);
    }
    if !trailing.is_empty() {
        doc.set_trailing(format!("\n{}\n", trailing.join("\n")));
    }
    let body = doc.to_string();
    Some(if head.is_empty() {
        body
    } else {
        format!("{}\n\n{}", head.join("\n"), body.trim_start_matches('\n'))
    })
}

/// The comment lines of a prefix, trimmed of leading space.
fn comment_lines(prefix: &str) -> Vec<String> {
    prefix
        .lines()
        .map(str::trim_start)
        .filter(|l| l.starts_with('#'))
        .map(str::to_string)
        .collect()
}

/// The comment lines of a prefix, less the file's top block when this prefix holds it.
fn prefix_comments(prefix: Option<&str>, head: &[&str]) -> Vec<String> {
    let mut lines = comment_lines(prefix.unwrap_or(""));
    if !head.is_empty() && lines.len() >= head.len() {
        let same = lines
            .iter()
            .zip(head)
            .all(|(a, b)| a.as_str() == b.trim_start());
        if same {
            lines.drain(..head.len());
        }
    }
    lines
}

/// The comment of a suffix (`  # note` after a value or a table header).
fn suffix_comment(suffix: Option<&str>) -> Option<String> {
    let s = suffix?;
    s.find('#').map(|i| format!(" {}", s[i..].trim_end()))
}

fn with_comments(prefix: &str, comments: &[String]) -> String {
    if comments.is_empty() {
        return prefix.to_string();
    }
    format!("{prefix}{}\n", comments.join("\n"))
}

fn carry_table(old: &Table, new: &mut Table, head: &[&str], orphans: &mut Vec<String>) {
    let comments = prefix_comments(old.decor().prefix().and_then(|r| r.as_str()), head);
    let prefix = new
        .decor()
        .prefix()
        .and_then(|r| r.as_str())
        .unwrap_or("")
        .to_string();
    new.decor_mut()
        .set_prefix(with_comments(&prefix, &comments));
    if let Some(c) = suffix_comment(old.decor().suffix().and_then(|r| r.as_str())) {
        new.decor_mut().set_suffix(c);
    }
    for (key, old_item) in old.iter() {
        let key_comments = old
            .key(key)
            .map(|k| prefix_comments(k.leaf_decor().prefix().and_then(|r| r.as_str()), head))
            .unwrap_or_default();
        if !new.contains_key(key) {
            collect_item(old_item, key_comments, orphans);
            continue;
        }
        if let Some(mut k) = new.key_mut(key) {
            let p = k
                .leaf_decor()
                .prefix()
                .and_then(|r| r.as_str())
                .unwrap_or("")
                .to_string();
            k.leaf_decor_mut()
                .set_prefix(with_comments(&p, &key_comments));
        }
        let Some(new_item) = new.get_mut(key) else {
            continue;
        };
        carry_item(old_item, new_item, head, orphans);
    }
}

fn carry_item(old: &Item, new: &mut Item, head: &[&str], orphans: &mut Vec<String>) {
    match (old, new) {
        (Item::Table(o), Item::Table(n)) => carry_table(o, n, head, orphans),
        (Item::ArrayOfTables(o), Item::ArrayOfTables(n)) => {
            // A row's comments go to the same row: the same content, else the same time;
            // never to whatever row now has its index.
            let old_rows: Vec<&Table> = o.iter().collect();
            let mut taken = vec![false; old_rows.len()];
            let mut pairs: Vec<(usize, usize)> = Vec::new();
            for by_time in [false, true] {
                for (ni, nt) in n.iter().enumerate() {
                    if pairs.iter().any(|p| p.1 == ni) {
                        continue;
                    }
                    let found = old_rows.iter().enumerate().find(|(oi, ot)| {
                        !taken[*oi]
                            && if by_time {
                                field(ot, "time").is_some()
                                    && field(ot, "time") == field(nt, "time")
                            } else {
                                signature(ot) == signature(nt)
                            }
                    });
                    if let Some((oi, _)) = found {
                        taken[oi] = true;
                        pairs.push((oi, ni));
                    }
                }
            }
            for (oi, ni) in pairs {
                if let Some(nt) = n.get_mut(ni) {
                    carry_table(old_rows[oi], nt, head, orphans);
                }
            }
            for (oi, ot) in old_rows.iter().enumerate() {
                if !taken[oi] {
                    collect_table_with_header(ot, orphans);
                }
            }
        }
        (Item::Value(o), Item::Value(n)) => {
            if let Some(c) = suffix_comment(o.decor().suffix().and_then(|r| r.as_str())) {
                n.decor_mut().set_suffix(c);
            }
        }
        (o, _) => collect_item(o, Vec::new(), orphans),
    }
}

/// A value as text, without its comments or spacing.
fn bare(item: &Item) -> Option<String> {
    item.as_value()
        .map(|v| v.clone().decorated("", "").to_string())
}

fn field(t: &Table, key: &str) -> Option<String> {
    t.get(key).and_then(bare)
}

/// A row's content: its fields and values, sorted, without comments or spacing.
fn signature(t: &Table) -> Vec<String> {
    let mut s: Vec<String> = t
        .iter()
        .map(|(k, v)| format!("{k}={}", bare(v).unwrap_or_default()))
        .collect();
    s.sort();
    s
}

fn collect_item(item: &Item, mut before: Vec<String>, orphans: &mut Vec<String>) {
    orphans.append(&mut before);
    match item {
        Item::Table(t) => collect_table_with_header(t, orphans),
        Item::ArrayOfTables(a) => a.iter().for_each(|t| collect_table_with_header(t, orphans)),
        Item::Value(v) => orphans.extend(
            suffix_comment(v.decor().suffix().and_then(|r| r.as_str()))
                .map(|c| c.trim_start().to_string()),
        ),
        Item::None => {}
    }
}

fn collect_table_with_header(t: &Table, orphans: &mut Vec<String>) {
    orphans.extend(comment_lines(
        t.decor().prefix().and_then(|r| r.as_str()).unwrap_or(""),
    ));
    orphans.extend(
        suffix_comment(t.decor().suffix().and_then(|r| r.as_str()))
            .map(|c| c.trim_start().to_string()),
    );
    collect_table(t, orphans);
}

fn collect_table(t: &Table, orphans: &mut Vec<String>) {
    for (key, item) in t.iter() {
        let before = t
            .key(key)
            .map(|k| {
                comment_lines(
                    k.leaf_decor()
                        .prefix()
                        .and_then(|r| r.as_str())
                        .unwrap_or(""),
                )
            })
            .unwrap_or_default();
        collect_item(item, before, orphans);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// An invented case, annotated by hand, with its fields out of canonical order.
    const ANNOTATED: &str = r#"# Bed 4, second course: levels from the ward analyser.
# Reviewed with the consultant.

[[level]]
value   = 6.1  # repeat sample, first one haemolysed
time = 2027-03-02T09:00:00
note = """
drawn from the # left arm
"""  # the label said right

[drug]
# gentamicin, once daily
level_unit = "mg/L"
name = "invented"

[[dose]]   # the first dose of this course
route = "bolus"
amount_mg = 100.0
time = 2027-03-02T08:00:00

[[level]]
time = 2027-03-02T15:00:00
value = 2.0
# end of the record
"#;

    fn comments(text: &str) -> Vec<String> {
        let doc: DocumentMut = text.parse().unwrap();
        let mut found = Vec::new();
        collect_table(doc.as_table(), &mut found);
        found.extend(comment_lines(doc.trailing().as_str().unwrap_or("")));
        found.sort();
        found
    }

    #[test]
    fn every_comment_survives_a_rewrite_in_canonical_order() {
        let file = CaseFile::parse(ANNOTATED).unwrap();
        let out = render(&file, Some(ANNOTATED)).unwrap();
        assert_eq!(CaseFile::parse(&out).unwrap(), file);
        let mut want = comments(ANNOTATED);
        // The head block is not attached to a key in the output either: count it apart.
        assert!(out.starts_with(
            "# Bed 4, second course: levels from the ward analyser.\n# Reviewed with the consultant.\n"
        ));
        let mut got = comments(&out);
        want.retain(|c| !c.starts_with("# Bed 4") && !c.starts_with("# Reviewed"));
        got.retain(|c| !c.starts_with("# Bed 4") && !c.starts_with("# Reviewed"));
        assert_eq!(got, want, "{out}");
        assert!(
            out.contains("value = 6.1 # repeat sample, first one haemolysed"),
            "{out}"
        );
        // The comment after a closing """ stays with its value.
        assert!(out.contains("\"\"\" # the label said right"), "{out}");
        // A hash inside a multi-line string is not a comment and stays in the string.
        assert!(out.contains("drawn from the # left arm"), "{out}");
        assert!(out.ends_with('\n'));
        // A second rewrite changes nothing.
        assert_eq!(render(&file, Some(&out)).unwrap(), out);
    }

    #[test]
    fn a_comment_on_a_removed_row_is_kept_at_the_end() {
        let mut file = CaseFile::parse(ANNOTATED).unwrap();
        file.levels.remove(0);
        let out = render(&file, Some(ANNOTATED)).unwrap();
        let tail = &out[out.find(ORPHANS_HEADING).expect(&out)..];
        assert!(
            tail.contains("# repeat sample, first one haemolysed"),
            "{out}"
        );
        assert!(tail.contains("# the label said right"), "{out}");
        // Not moved onto the row that now has the removed row's index.
        assert!(out.contains("value = 2.0\n"), "{out}");
        let back = CaseFile::parse(&out).unwrap();
        assert_eq!(back, file);
    }

    #[test]
    fn a_new_case_is_canonical_and_ends_with_a_newline() {
        let file = CaseFile::parse("[drug]\nlevel_unit = \"mg/L\"").unwrap();
        let out = render(&file, None).unwrap();
        assert_eq!(out, file.to_toml().unwrap());
        assert!(out.ends_with('\n'));
        assert!(!has_comments(&out));
        assert!(has_comments(ANNOTATED));
        assert!(!has_comments("label = \"bed #4\"\n"));
    }
}
