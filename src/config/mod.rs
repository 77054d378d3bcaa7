//! Run configuration (TOML). Every table denies unknown keys; `validate` collects every
//! problem at once, each naming its key, the value and the allowed range.

pub mod cosmology;
pub mod environment;
pub mod overrides;
pub mod run;

pub use cosmology::CosmologySection;
pub use environment::{Environment, EnvironmentSection, PairSpec, PartnerMass};
pub use overrides::apply_overrides;
pub use run::{MassBin, OneOrMany, RunConfig, RunConfigFile, RunSection};

use crate::error::{InvalidValue, MISSING};

/// `[low, high]` keys take exactly two values. serde reads a fixed-size array from the first
/// elements of a longer TOML array and drops the rest without a word (a review found
/// `r_over_rvir = [0.0, 0.3, 1.0]` taken as 0-0.3); these read the whole list and refuse
/// any other length.
pub mod pair {
    use serde::de::{Deserialize, Deserializer, Error};

    /// `#[serde(deserialize_with = "crate::config::pair::exact")]` on a `[T; 2]` field.
    pub fn exact<'de, D: Deserializer<'de>, T: Deserialize<'de>>(d: D) -> Result<[T; 2], D::Error> {
        let v = Vec::<T>::deserialize(d)?;
        let n = v.len();
        <[T; 2]>::try_from(v)
            .map_err(|_| D::Error::invalid_length(n, &"exactly two values, [low, high]"))
    }

    /// The same for an `Option<[T; 2]>` field (with `default`).
    pub fn optional<'de, D: Deserializer<'de>, T: Deserialize<'de>>(
        d: D,
    ) -> Result<Option<[T; 2]>, D::Error> {
        exact(d).map(Some)
    }
}

/// A list of configuration problems, printed one per line.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{}", .0.iter().map(|p| p.to_string()).collect::<Vec<_>>().join("\n"))]
pub struct ConfigProblems(pub Vec<InvalidValue>);

/// Read the `[cosmology]` table of a run-config file, ignoring the other tables (the first
/// one of a sweep's `[[cosmology]]` list). Every bad key or value of the table is reported at
/// once, as for a run configuration.
pub fn cosmology_from_file(path: &std::path::Path) -> Result<CosmologySection, ConfigProblems> {
    cosmology_from_file_labelled(path, None).map(|(s, _)| s)
}

/// The cosmology of a run configuration `path` whose label (`label`, or the label made from
/// its preset and overrides, as the run names its cells) is `label`; without a label, the
/// first. With several `[[cosmology]]` tables and no label, the note names the one taken and
/// the others (a walkthrough's sweep was read as its first cosmology without a word).
pub fn cosmology_from_file_labelled(
    path: &std::path::Path,
    label: Option<&str>,
) -> Result<(CosmologySection, Option<String>), ConfigProblems> {
    /// Only the cosmology: other tables are not looked at.
    #[derive(serde::Deserialize)]
    struct CosmologyOnly {
        cosmology: Option<OneOrMany<CosmologySection>>,
    }
    let text = std::fs::read_to_string(path).map_err(|e| {
        ConfigProblems(vec![InvalidValue::new(
            "config file",
            path.display(),
            format!("cannot be read: {e}"),
        )])
    })?;
    let (parsed, mut problems) =
        parse_collecting::<CosmologyOnly>(&text, &path.display().to_string());
    match parsed.and_then(|c| c.cosmology) {
        Some(c) if problems.is_empty() => {
            let all = c.to_vec();
            let labels: Vec<String> = all.iter().map(|s| s.display_label()).collect();
            let listed = || {
                labels
                    .iter()
                    .map(|l| format!("\"{l}\""))
                    .collect::<Vec<_>>()
                    .join(", ")
            };
            match label {
                Some(want) => match labels.iter().position(|l| l == want) {
                    Some(k) => Ok((all[k].clone(), None)),
                    None => Err(ConfigProblems(vec![InvalidValue::new(
                        "--cosmology",
                        want,
                        format!(
                            "{} has no cosmology of that label: {}",
                            path.display(),
                            listed()
                        ),
                    )])),
                },
                None => match all.first() {
                    Some(first) => Ok((
                        first.clone(),
                        (all.len() > 1).then(|| {
                            format!(
                                "{} has {} cosmologies ({}); this uses the first, \"{}\" \
                                 (choose another with --cosmology LABEL)",
                                path.display(),
                                all.len(),
                                listed(),
                                labels[0]
                            )
                        }),
                    )),
                    None => Err(ConfigProblems(vec![InvalidValue::new(
                        "cosmology",
                        "[]",
                        format!("{} has an empty list of cosmologies", path.display()),
                    )])),
                },
            }
        }
        Some(_) => Err(ConfigProblems(problems)),
        None => {
            if problems.is_empty() {
                problems.push(InvalidValue::new(
                    "cosmology",
                    crate::error::MISSING,
                    format!("{} has no [cosmology] table", path.display()),
                ));
            }
            Err(ConfigProblems(problems))
        }
    }
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
        // a required key or table that is absent: no line to blame, and nothing more can be
        // read without it
        if let Some(f) = missing_field(err.message()) {
            // (unless it went missing because its line was set aside: that is reported)
            let set_aside_key = problems
                .iter()
                .any(|p| p.key.rsplit('.').next() == Some(f.as_str()));
            if !set_aside_key {
                // the one table without defaults says what to write (a walkthrough deleted it
                // with the keys it did not change)
                let how = if f == "cosmology" {
                    " (the [cosmology] table has no default: add e.g. `[cosmology]` with \
                     `preset = \"planck18\"`)"
                } else {
                    ""
                };
                problems.push(InvalidValue::new(
                    f,
                    MISSING,
                    format!("required in {source}{how}"),
                ));
            }
            return (None, problems);
        }
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
                // its entries up to the next header (a value may run over several lines)
                let mut j = i + 1;
                while j < lines.len() && !lines[j].trim_start().starts_with('[') {
                    let end = value_end(&lines, j);
                    for l in &mut lines[j..=end] {
                        *l = String::new();
                    }
                    j = end + 1;
                }
                continue;
            }
        }
        // the statement the error points into (a line inside a multi-line value belongs to
        // the key above it)
        let start = line_no.map(|i| {
            (0..=i)
                .rev()
                .find(|&j| {
                    !lines[j].trim().is_empty()
                        && key_value_of(&lines, j).is_some()
                        && value_end(&lines, j) >= i
                })
                .unwrap_or(i)
        });
        let keyed = start.and_then(|i| key_value_of(&lines, i).map(|kv| (i, kv)));
        match keyed {
            Some((i, (key, mut value))) if !set_aside.contains(&i) => {
                // the whole value, if it runs over several lines
                let end = value_end(&lines, i);
                if end > i {
                    for l in &lines[i + 1..=end] {
                        value.push(' ');
                        value.push_str(l.trim());
                    }
                    if value.chars().count() > 60 {
                        value = value.chars().take(57).collect::<String>() + "...";
                    }
                }
                let why = explain(err.message(), &value);
                problems.push(InvalidValue::new(key, value, why));
                set_aside.insert(i);
                for l in &mut lines[i..=end] {
                    *l = String::new();
                }
            }
            _ => {
                let at = line_no
                    .map(|i| format!(" (line {})", i + 1))
                    .unwrap_or_default();
                let msg = explain(err.message(), "");
                problems.push(InvalidValue::new(
                    format!("{source}{at}"),
                    "",
                    format!("not valid TOML: {msg}"),
                ));
                return (None, problems);
            }
        }
    }
    (None, problems)
}

/// The last line of the statement that starts on line i: a `key = value` whose value opens
/// brackets or a triple-quoted string runs on until they close (strings are skipped when
/// counting brackets); anything else ends on its own line.
fn value_end(lines: &[String], i: usize) -> usize {
    let Some((_, v)) = lines[i].split_once('=') else {
        return i;
    };
    let v = v.trim_start();
    for delim in ["\"\"\"", "'''"] {
        if let Some(rest) = v.strip_prefix(delim) {
            if rest.contains(delim) {
                return i;
            }
            return (i + 1..lines.len())
                .find(|&j| lines[j].contains(delim))
                .unwrap_or(lines.len() - 1);
        }
    }
    let mut depth = 0i32;
    let mut j = i;
    let mut text = v.to_string();
    loop {
        for (_, c) in outside_quotes(without_comment(&text)) {
            match c {
                '[' | '{' => depth += 1,
                ']' | '}' => depth -= 1,
                _ => {}
            }
        }
        if depth <= 0 || j + 1 >= lines.len() {
            return j;
        }
        j += 1;
        text = lines[j].clone();
    }
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
    let value = without_comment(v.trim());
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

/// The characters of `v` outside quoted strings (a basic string escapes with a backslash),
/// with their byte offsets; the quotes themselves are left out.
fn outside_quotes(v: &str) -> impl Iterator<Item = (usize, char)> + '_ {
    let mut quote: Option<char> = None;
    let mut escaped = false;
    v.char_indices().filter(move |&(_, c)| match quote {
        Some(q) => {
            if escaped {
                escaped = false;
            } else if q == '"' && c == '\\' {
                escaped = true;
            } else if c == q {
                quote = None;
            }
            false
        }
        None if c == '"' || c == '\'' => {
            quote = Some(c);
            false
        }
        None => true,
    })
}

/// A value's text up to a comment (the first '#' outside a quoted string), trailing blanks
/// removed.
fn without_comment(v: &str) -> &str {
    match outside_quotes(v).find(|&(_, c)| c == '#') {
        Some((k, _)) => v[..k].trim_end(),
        None => v,
    }
}

const NUMBER_IN_QUOTES: &str = "a number in quotes";
const NUMBER_WITH_UNIT: &str = "a number with a unit";

/// Whether a problem is a number written with a unit or in quotes (`explain`): the key takes
/// a number, whose allowed range its validation can tell (`with_stand_in`).
pub(crate) fn is_written_number(p: &InvalidValue) -> bool {
    p.allowed.starts_with(NUMBER_IN_QUOTES) || p.allowed.starts_with(NUMBER_WITH_UNIT)
}

/// `text` with the line of `key` whose value is written `value` given `stand_in` instead
/// (the value as `parse_collecting` reported it).
pub(crate) fn with_stand_in(text: &str, key: &str, value: &str, stand_in: &str) -> String {
    let lines: Vec<String> = text.lines().map(str::to_string).collect();
    (0..lines.len())
        .map(|i| match key_value_of(&lines, i) {
            Some((k, v)) if k == key && v == value => {
                let name = lines[i].split_once('=').map_or("", |x| x.0);
                format!("{name}= {stand_in}")
            }
            _ => lines[i].clone(),
        })
        .collect::<Vec<_>>()
        .join("\n")
}

/// A parser or serde message in the words of this tool.
fn explain(msg: &str, value: &str) -> String {
    let msg = one_line(msg);
    // `3.0 kpc`, `1.2e12 Msun`: a number with a unit; quoted (`"0.2 dex"`) where a number is
    // expected, the same (a walkthrough got only serde's type error for it)
    let unquoted = value
        .trim()
        .strip_prefix('"')
        .and_then(|v| v.strip_suffix('"'))
        .filter(|_| msg.contains("invalid type: string"));
    let value = unquoted.unwrap_or(value);
    if let Some(v) = unquoted {
        if v.trim().parse::<f64>().is_ok() {
            return format!("{NUMBER_IN_QUOTES}: write it without them");
        }
    }
    let mut words = value.split_whitespace();
    if let (Some(num), Some(_), None) = (words.next(), words.next(), words.next()) {
        if num.parse::<f64>().is_ok() {
            return format!(
                "{NUMBER_WITH_UNIT}: write the number alone, in the unit the key's name \
                 gives (e.g. disc_a_kpc = 3.0 is in kpc, mass_msun = 1.2e12 in Msun)"
            );
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::config::RunConfigFile;

    fn problems(text: &str) -> Vec<String> {
        let (_, p) = parse_collecting::<RunConfigFile>(text, "t.toml");
        p.iter().map(|p| p.to_string()).collect()
    }

    /// `tests.backsplash.field`: an unknown model is reported with its key, its value and
    /// the three allowed names; each allowed name parses.
    #[test]
    fn backsplash_field_names_its_allowed_values() {
        let base = "[cosmology]\npreset = \"planck18\"\n[tests.backsplash]\n";
        let p = problems(&format!("{base}field = \"linear\"\n"));
        assert_eq!(p.len(), 1, "{p:?}");
        assert!(
            p[0].starts_with("tests.backsplash.field = \"linear\" is not allowed")
                && ["`nonlinear`", "`correlation`", "`region`"]
                    .iter()
                    .all(|n| p[0].contains(n)),
            "{p:?}"
        );
        for ok in ["nonlinear", "correlation", "region"] {
            let p = problems(&format!("{base}field = \"{ok}\"\n"));
            assert!(p.is_empty(), "{ok}: {p:?}");
        }
    }

    /// A number written in quotes, with or without a unit, is named as such (a walkthrough got
    /// only serde's type error); a quoted value of a key that takes a word is not.
    #[test]
    fn quoted_numbers_are_named() {
        let base = "[cosmology]\npreset = \"planck18\"\n[galaxies]\n";
        let p = problems(&format!("{base}size_scatter_dex = \"0.2 dex\"\n"));
        assert!(
            p.len() == 1 && p[0].contains("a number with a unit"),
            "{p:?}"
        );
        let p = problems(&format!("{base}size_scatter_dex = \"0.2\"\n"));
        assert!(p.len() == 1 && p[0].contains("a number in quotes"), "{p:?}");
        let p = problems(&format!("{base}smhm = \"1.5\"\n"));
        assert!(p.len() == 1 && !p[0].contains("quotes"), "{p:?}");
    }

    #[test]
    fn a_missing_table_blames_no_key() {
        let p = problems("run.master_seed = 1\n");
        assert_eq!(
            p,
            vec![
                "cosmology is missing: required in t.toml (the [cosmology] table has no \
                 default: add e.g. `[cosmology]` with `preset = \"planck18\"`)"
            ]
        );
    }

    #[test]
    fn multi_line_values_are_set_aside_whole() {
        let text = "[run]\nmaster_seed = [\n1,\n2,\n]\nthreds = 1\n[cosmology]\npreset = \"planck18\"\n\
                    [host]\nmass_msun = [\n1e12,\n\"2e12\",\n]\n[bogus]\nx = [\n[1, 2],\n]\ny = 1\n";
        let p = problems(text);
        assert_eq!(p.len(), 4, "{p:#?}");
        for want in [
            "run.master_seed = [ 1, 2, ] is not allowed: wrong type",
            "run.threds = 1 is not allowed: unknown key",
            "host.mass_msun = [ 1e12, \"2e12\", ] is not allowed: wrong type",
            "bogus = (table) is not allowed: unknown table",
        ] {
            assert!(p.iter().any(|l| l.starts_with(want)), "{want}: {p:#?}");
        }
    }

    #[test]
    fn a_required_key_set_aside_is_not_reported_twice() {
        #[derive(serde::Deserialize)]
        #[allow(dead_code)]
        struct Needs {
            mass: f64,
        }
        let (v, p) = parse_collecting::<Needs>("mass = \"big\"\n", "t.toml");
        assert!(v.is_none());
        assert_eq!(p.len(), 1, "{p:?}");
        assert!(p[0]
            .to_string()
            .starts_with("mass = \"big\" is not allowed: wrong type"));
        // and a key that was never there is named
        let (_, p) = parse_collecting::<Needs>("other = 1\n", "t.toml");
        assert_eq!(
            p.last().unwrap().to_string(),
            "mass is missing: required in t.toml"
        );
    }

    #[test]
    fn keys_of_arrays_of_tables_are_numbered() {
        let p = problems("[[cosmology]]\npreset = \"planck18\"\n[[cosmology]]\npreset = \"wmap9\"\nsigma_8 = 0.8\n");
        assert_eq!(p.len(), 1, "{p:?}");
        assert!(p[0].starts_with("cosmology[1].sigma_8 = 0.8"), "{p:?}");
    }

    #[test]
    fn a_quoted_value_is_named_without_its_comment() {
        let p = problems(
            "[galaxies]\nsmhm_epoch = \"now\"   # peak | today\nsmhm = 'x#y' # a comment\n",
        );
        assert!(
            p.iter()
                .any(|x| x.starts_with("galaxies.smhm_epoch = \"now\" is not allowed")),
            "{p:?}"
        );
        assert!(
            p.iter()
                .all(|x| !x.contains("peak | today") && !x.contains("a comment")),
            "{p:?}"
        );
        // the same scan for any value: a '#' inside a quoted string is not a comment
        assert_eq!(without_comment(r#"[1, "a#b"] # c"#), r#"[1, "a#b"]"#);
        assert_eq!(without_comment(r##""x\"#y" # c"##), r##""x\"#y""##);
    }

    #[test]
    fn value_end_skips_brackets_in_strings_and_comments() {
        let lines: Vec<String> = ["a = [\"]\", # ]", "1]", "b = 2"]
            .iter()
            .map(|s| s.to_string())
            .collect();
        assert_eq!(value_end(&lines, 0), 1);
        assert_eq!(value_end(&lines, 2), 2);
        let triple: Vec<String> = ["s = \"\"\"x", "y", "z\"\"\"", "t = 1"]
            .iter()
            .map(|s| s.to_string())
            .collect();
        assert_eq!(value_end(&triple, 0), 2);
    }
}
