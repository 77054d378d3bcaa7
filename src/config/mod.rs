//! Run configuration (TOML). Every table denies unknown keys; `validate` collects every
//! problem at once, each naming its key, the value and the allowed range.

pub mod cosmology;
pub mod run;

pub use cosmology::CosmologySection;
pub use run::{MassBin, OneOrMany, RunConfig, RunConfigFile, RunSection};

use crate::error::{InvalidValue, MISSING};

/// A list of configuration problems, printed one per line.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{}", .0.iter().map(|p| p.to_string()).collect::<Vec<_>>().join("\n"))]
pub struct ConfigProblems(pub Vec<InvalidValue>);

/// Read the `[cosmology]` table of a run-config file, ignoring the other tables.
pub fn cosmology_from_file(path: &std::path::Path) -> Result<CosmologySection, ConfigProblems> {
    let text = std::fs::read_to_string(path).map_err(|e| {
        ConfigProblems(vec![InvalidValue::new(
            "config file",
            path.display(),
            format!("cannot be read: {e}"),
        )])
    })?;
    let value: toml::Table = toml::from_str(&text).map_err(|e| {
        ConfigProblems(vec![InvalidValue::new(
            "config file",
            path.display(),
            format!("is not valid TOML: {}", one_line(&e.to_string())),
        )])
    })?;
    let section = value.get("cosmology").cloned().ok_or_else(|| {
        ConfigProblems(vec![InvalidValue::new(
            "cosmology",
            crate::error::MISSING,
            format!("{} has no [cosmology] table", path.display()),
        )])
    })?;
    // a sweep has an array of [[cosmology]] tables: take the first
    let section = match section {
        toml::Value::Array(a) if !a.is_empty() => a[0].clone(),
        other => other,
    };
    section.try_into::<CosmologySection>().map_err(|e| {
        ConfigProblems(vec![InvalidValue::new(
            "cosmology",
            "(table)",
            one_line(&e.to_string()),
        )])
    })
}

/// Deserialize a TOML document and report every bad line, not only the first. The TOML
/// parser and serde stop at the first problem; when it points at a `key = value` line (an
/// unknown key, a value of the wrong type, a value with a unit suffix), that line is recorded
/// as a problem naming its dotted key and value, set aside, and the document parsed again.
/// A problem that does not point at such a line (a missing table, a broken header) ends the
/// search. Returns the value when what is left parses, with the problems found on the way.
/// `source` names the file in messages.
pub fn parse_collecting<T: serde::de::DeserializeOwned>(
    text: &str,
    source: &str,
) -> (Option<T>, Vec<InvalidValue>) {
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    let mut problems = Vec::new();
    let mut set_aside = std::collections::HashSet::new();
    for _ in 0..=lines.len() {
        let cur = lines.join("\n");
        let err = match toml::from_str::<T>(&cur) {
            Ok(v) => return (Some(v), problems),
            Err(e) => e,
        };
        let line_no = err
            .span()
            .map(|sp| {
                cur.get(..sp.start.min(cur.len()))
                    .unwrap_or(&cur)
                    .matches('\n')
                    .count()
            })
            .filter(|&i| i < lines.len());
        // an unknown table: its header and its keys are set aside together
        if let Some(i) = line_no.filter(|i| !set_aside.contains(i)) {
            let head = lines[i].trim();
            let name = head
                .strip_prefix("[[")
                .and_then(|r| r.split_once("]]"))
                .or_else(|| head.strip_prefix('[').and_then(|r| r.split_once(']')))
                .map(|(n, _)| n.trim().to_string());
            if let (Some(name), true) = (name, err.message().starts_with("unknown field")) {
                problems.push(InvalidValue::new(
                    name,
                    "(table)",
                    explain(err.message(), "").replace("unknown key", "unknown table"),
                ));
                set_aside.insert(i);
                lines[i] = String::new();
                for l in lines.iter_mut().skip(i + 1) {
                    if l.trim_start().starts_with('[') {
                        break;
                    }
                    *l = String::new();
                }
                continue;
            }
        }
        let keyed = line_no.and_then(|i| key_value_of(&lines, i).map(|kv| (i, kv)));
        match keyed {
            Some((i, (key, value))) if !set_aside.contains(&i) => {
                let why = explain(err.message(), &value);
                problems.push(InvalidValue::new(key, value, why));
                set_aside.insert(i);
                lines[i] = String::new();
            }
            _ => {
                let at = line_no
                    .map(|i| format!(" (line {})", i + 1))
                    .unwrap_or_default();
                let msg = explain(err.message(), "");
                problems.push(match missing_field(err.message()) {
                    Some(f) => InvalidValue::new(f, MISSING, format!("required in {source}")),
                    None => InvalidValue::new(
                        format!("{source}{at}"),
                        "",
                        format!("not valid TOML: {msg}"),
                    ),
                });
                return (None, problems);
            }
        }
    }
    (None, problems)
}

/// The dotted key and the value text of line i if it is a `key = value` line, with the
/// table it sits in (`[a.b]` gives `a.b.key`, the n-th `[[a]]` gives `a[n].key`, counting
/// from 0).
fn key_value_of(lines: &[String], i: usize) -> Option<(String, String)> {
    let line = lines[i].trim();
    if line.starts_with('[') || line.starts_with('#') {
        return None;
    }
    let (k, v) = line.split_once('=')?;
    let key = k.trim().trim_matches('"');
    if key.is_empty() {
        return None;
    }
    // the value without a trailing comment (a '#' inside a quoted string is kept)
    let mut value = v.trim();
    if !value.starts_with('"') && !value.starts_with('\'') {
        if let Some((before, _)) = value.split_once('#') {
            value = before.trim_end();
        }
    }
    let mut table = String::new();
    for (j, l) in lines[..i].iter().enumerate().rev() {
        let l = l.trim();
        if let Some(name) = l
            .strip_prefix("[[")
            .and_then(|r| r.split_once("]]"))
            .map(|x| x.0)
        {
            let name = name.trim();
            let n = lines[..j]
                .iter()
                .filter(|x| {
                    x.trim()
                        .strip_prefix("[[")
                        .and_then(|r| r.split_once("]]"))
                        .is_some_and(|(m, _)| m.trim() == name)
                })
                .count();
            table = format!("{name}[{n}].");
            break;
        }
        if let Some(name) = l
            .strip_prefix('[')
            .and_then(|r| r.split_once(']'))
            .map(|x| x.0)
        {
            table = format!("{}.", name.trim());
            break;
        }
    }
    Some((format!("{table}{key}"), value.to_string()))
}

/// A parser or serde message in the words of this tool.
fn explain(msg: &str, value: &str) -> String {
    let msg = one_line(msg);
    // `3.0 kpc`, `1.2e12 Msun`: a number with a unit
    let mut words = value.split_whitespace();
    if let (Some(num), Some(_), None) = (words.next(), words.next(), words.next()) {
        if num.parse::<f64>().is_ok() {
            return "a number with a unit: write the number alone, in the unit the key's name \
                    gives (e.g. disc_a_kpc = 3.0 is in kpc, mass_msun = 1.2e12 in Msun)"
                .to_string();
        }
    }
    if let Some(rest) = msg.strip_prefix("unknown field `") {
        let expected = rest.split_once("`, ").map(|x| x.1).unwrap_or("");
        return format!("unknown key; {expected}");
    }
    let msg = msg
        .replace("expected usize", "expected a whole number")
        .replace("expected u64", "expected a whole number")
        .replace("expected u32", "expected a whole number")
        .replace("expected f64", "expected a number");
    if msg.starts_with("invalid type") {
        return format!("wrong type ({msg})");
    }
    msg
}

fn missing_field(msg: &str) -> Option<String> {
    msg.strip_prefix("missing field `")
        .and_then(|r| r.split_once('`'))
        .map(|(f, _)| f.to_string())
}

/// Collapse a multi-line parser message into one line.
pub fn one_line(s: &str) -> String {
    s.lines()
        .map(str::trim)
        .filter(|l| !l.is_empty())
        .collect::<Vec<_>>()
        .join(" ")
}
