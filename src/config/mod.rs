//! Run configuration (TOML). Every table denies unknown keys; `validate` collects every
//! problem at once, each naming its key, the value and the allowed range.

pub mod cosmology;
pub mod run;

pub use cosmology::CosmologySection;
pub use run::{MassBin, OneOrMany, RunConfig, RunConfigFile, RunSection};

use crate::error::InvalidValue;

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

/// Collapse a multi-line parser message into one line.
pub fn one_line(s: &str) -> String {
    s.lines()
        .map(str::trim)
        .filter(|l| !l.is_empty())
        .collect::<Vec<_>>()
        .join(" ")
}
