//! `--set TABLE.KEY=VALUE` on the command line: a key of the configuration changed without
//! editing the file. Each override is written into the configuration's text (its comments and
//! layout kept, the changed line marked), and that text is then read and validated like any
//! configuration: an unknown table or key, a value of the wrong type or out of range is
//! reported as in a file, naming the key. The text with the overrides is what a run stores,
//! so the store says exactly what it was grown with.

use crate::error::InvalidValue;

use super::ConfigProblems;

/// The comment written after a value set on the command line.
pub const SET_MARK: &str = "set on the command line (--set)";

/// `text` with every override of `sets` (each `TABLE.KEY=VALUE`, e.g.
/// `orbits.disc_tide_ratio=0.8` or `tests.selection.mstar_msun=[1e4, 1e6]`) written in, in
/// order (a later one of the same key wins). VALUE is read as a TOML value; a word that is not
/// one (`erf`) is taken as a string. Refused here: an override without `=` or without a table,
/// a text that is not TOML, a path through a value that is not a table, and a table that is
/// given several times (`[[cosmology]]` with more than one entry: set those in the file).
pub fn apply_overrides(text: &str, sets: &[String]) -> Result<String, ConfigProblems> {
    if sets.is_empty() {
        return Ok(text.to_string());
    }
    let mut doc: toml_edit::DocumentMut = text.parse().map_err(|e: toml_edit::TomlError| {
        ConfigProblems(vec![InvalidValue::new(
            "--set",
            sets.join(" "),
            format!(
                "the configuration is not TOML, so keys cannot be set in it ({})",
                super::one_line(e.message())
            ),
        )])
    })?;
    let mut problems = Vec::new();
    for s in sets {
        if let Err(p) = set_one(&mut doc, s) {
            problems.push(p);
        }
    }
    if problems.is_empty() {
        Ok(doc.to_string())
    } else {
        Err(ConfigProblems(problems))
    }
}

fn set_one(doc: &mut toml_edit::DocumentMut, s: &str) -> Result<(), InvalidValue> {
    let bad = |why: &str| InvalidValue::new("--set", s, why.to_string());
    let (path, raw) = s
        .split_once('=')
        .ok_or_else(|| bad("give TABLE.KEY=VALUE, e.g. orbits.disc_tide_ratio=0.8"))?;
    let keys: Vec<&str> = path.trim().split('.').map(str::trim).collect();
    if keys.len() < 2 || keys.iter().any(|k| k.is_empty()) {
        return Err(bad(
            "name the table and the key, TABLE.KEY=VALUE (e.g. galaxies.occupation=erf); every key of the configuration is in a table",
        ));
    }
    let raw = raw.trim();
    let mut value: toml_edit::Value = match raw.parse::<toml_edit::Value>() {
        Ok(v) => v,
        Err(_) if !raw.is_empty() => toml_edit::Value::from(raw),
        Err(_) => return Err(bad("the value is empty")),
    };
    let (last, tables) = keys.split_last().expect("two keys or more");
    // a comment cannot stand inside an inline table (`host = { mass_msun = 1e12 }`)
    let mut inline = false;
    let mut here: &mut dyn toml_edit::TableLike = doc.as_table_mut();
    for (depth, k) in tables.iter().enumerate() {
        let name = keys[..=depth].join(".");
        if !here.contains_key(k) {
            // a table the file leaves out (every key at its default): created, then
            // validated like a written one
            let mut t = toml_edit::Table::new();
            t.set_implicit(true);
            here.insert(k, toml_edit::Item::Table(t));
        }
        let entries = match here.get(k) {
            Some(toml_edit::Item::ArrayOfTables(a)) => Some(a.len()),
            _ => None,
        };
        if let Some(n) = entries.filter(|&n| n != 1) {
            return Err(InvalidValue::new(
                "--set",
                s,
                format!(
                    "the configuration has {n} [[{name}]] tables; set a key of one of them in the file"
                ),
            ));
        }
        let item = here.get_mut(k).expect("inserted above");
        inline |= matches!(
            item,
            toml_edit::Item::Value(toml_edit::Value::InlineTable(_))
        );
        let next: Option<&mut dyn toml_edit::TableLike> = match item {
            toml_edit::Item::ArrayOfTables(a) => {
                a.get_mut(0).map(|t| t as &mut dyn toml_edit::TableLike)
            }
            other => other.as_table_like_mut(),
        };
        here = next.ok_or_else(|| {
            InvalidValue::new(
                "--set",
                s,
                format!("{name} is a value in the configuration, not a table"),
            )
        })?;
    }
    if !inline {
        value.decor_mut().set_suffix(format!("  # {SET_MARK}"));
    }
    match here.get_mut(last) {
        Some(toml_edit::Item::Value(v)) => *v = value,
        Some(toml_edit::Item::None) | None => {
            here.insert(last, toml_edit::Item::Value(value));
        }
        Some(_) => {
            return Err(bad(&format!(
                "{path} is a table in the configuration, not a key; set one of its keys",
                path = path.trim()
            )))
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    const TEXT: &str = "# a run\n[run]\nmaster_seed = 3   # the seed\n\n[cosmology]\npreset = \"planck18\"\n\n[tests.selection]\nname = \"mine\"\n";

    fn set(sets: &[&str]) -> Result<String, ConfigProblems> {
        apply_overrides(
            TEXT,
            &sets.iter().map(|s| s.to_string()).collect::<Vec<_>>(),
        )
    }

    #[test]
    fn a_key_is_replaced_in_place_and_marked() {
        let t = set(&["run.master_seed=7"]).unwrap();
        assert!(t.starts_with("# a run\n[run]\nmaster_seed = 7"), "{t}");
        assert!(t.contains(SET_MARK));
        assert!(!t.contains("master_seed = 3"));
        // the rest of the file is as it was
        assert!(t.contains("[cosmology]\npreset = \"planck18\""));
    }

    #[test]
    fn missing_tables_and_keys_are_added_and_words_are_strings() {
        let t = set(&[
            "galaxies.occupation=erf",
            "orbits.disc_tide_ratio = 0.8",
            "tests.selection.mstar_msun=[1e4, 1e6]",
            "tests.draws=100",
        ])
        .unwrap();
        let v: toml::Table = toml::from_str(&t).unwrap();
        assert_eq!(v["galaxies"]["occupation"].as_str(), Some("erf"));
        assert_eq!(v["orbits"]["disc_tide_ratio"].as_float(), Some(0.8));
        let m = v["tests"]["selection"]["mstar_msun"].as_array().unwrap();
        assert_eq!(m[1].as_float(), Some(1e6));
        assert_eq!(v["tests"]["selection"]["name"].as_str(), Some("mine"));
        // a key of a table the file gives only as the parent of another
        assert_eq!(v["tests"]["draws"].as_integer(), Some(100));
    }

    #[test]
    fn inline_and_dotted_tables_are_set_in_place() {
        let text = "host = { mass_msun = 1e12 }\norbits.rtol = 1e-4\n";
        let t = apply_overrides(
            text,
            &["host.mass_msun=2e12".into(), "orbits.rtol=1e-5".into()],
        )
        .unwrap();
        let v: toml::Table = toml::from_str(&t).unwrap_or_else(|e| panic!("{e}\n{t}"));
        assert_eq!(v["host"]["mass_msun"].as_float(), Some(2e12));
        assert_eq!(v["orbits"]["rtol"].as_float(), Some(1e-5));
        // marked where a comment can stand, not inside the braces
        assert_eq!(t.matches(SET_MARK).count(), 1, "{t}");
    }

    #[test]
    fn the_later_of_two_settings_of_a_key_wins() {
        let t = set(&["run.master_seed=7", "run.master_seed=9"]).unwrap();
        let v: toml::Table = toml::from_str(&t).unwrap();
        assert_eq!(v["run"]["master_seed"].as_integer(), Some(9));
    }

    #[test]
    fn malformed_overrides_name_the_override_and_say_why() {
        for (s, why) in [
            ("run.master_seed", "TABLE.KEY=VALUE"),
            ("master_seed=3", "name the table"),
            ("run..seed=3", "name the table"),
            ("run.master_seed=", "empty"),
            ("run.master_seed.x=1", "is a value"),
            ("tests.selection=1", "is a table"),
        ] {
            let e = set(&[s]).unwrap_err();
            assert_eq!(e.0.len(), 1, "{s}");
            assert_eq!(e.0[0].key, "--set");
            assert_eq!(e.0[0].value, s);
            assert!(e.0[0].allowed.contains(why), "{s}: {}", e.0[0].allowed);
        }
        // every bad one at once
        assert_eq!(
            set(&["a=1", "run.master_seed.x=2", "run.master_seed=4"])
                .unwrap_err()
                .0
                .len(),
            2
        );
    }

    #[test]
    fn a_list_of_several_tables_is_refused_one_is_used() {
        let two = "[[cosmology]]\npreset = \"planck18\"\n[[cosmology]]\npreset = \"wmap9\"\n";
        let e = apply_overrides(two, &["cosmology.preset=planck15".into()]).unwrap_err();
        assert!(e.0[0].allowed.contains("2 [[cosmology]] tables"), "{e}");
        let one = "[[cosmology]]\npreset = \"planck18\"\n";
        let t = apply_overrides(one, &["cosmology.preset=planck15".into()]).unwrap();
        assert!(t.contains("preset = \"planck15\""), "{t}");
    }
}
