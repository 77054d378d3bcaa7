//! The files a run reads besides its configuration, by content: each is recorded with the
//! SHA-256 of the bytes the run read (in the parts directory of a run as `inputs`, in a
//! store as the `input_files` attribute), so that a resumed run, a merge and a re-test can
//! tell that a file named by the same configuration now holds something else.
//!
//! Today these are the transfer-function tables (`cosmology.transfer_table`). The observed
//! sample is not among them: it does not enter the hosts, and every analysis stores the
//! sample's rows it used.

use sha2::{Digest, Sha256};

/// SHA-256 of `bytes`, lowercase hex (as `sha256sum` prints it).
pub fn sha256_hex(bytes: &[u8]) -> String {
    Sha256::digest(bytes)
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

/// One input file: the configuration key that names it, the path it was read from, and the
/// SHA-256 of its contents.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct InputFile {
    pub key: String,
    pub path: String,
    pub sha256: String,
}

/// The input files of a run, in the order of their keys in the configuration.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct InputFiles(pub Vec<InputFile>);

impl InputFiles {
    /// As stored: one line per file, `KEY<tab>SHA256<tab>PATH` (empty: no input files, or
    /// not recorded).
    pub fn to_text(&self) -> String {
        self.0
            .iter()
            .map(|f| format!("{}\t{}\t{}\n", f.key, f.sha256, f.path))
            .collect()
    }

    /// Read `to_text`'s form back (lines that are not of that form are skipped).
    pub fn parse(text: &str) -> Self {
        Self(
            text.lines()
                .filter_map(|l| {
                    let mut it = l.splitn(3, '\t');
                    let (key, sha256, path) = (it.next()?, it.next()?, it.next()?);
                    (!key.is_empty() && !sha256.is_empty()).then(|| InputFile {
                        key: key.to_string(),
                        path: path.to_string(),
                        sha256: sha256.to_string(),
                    })
                })
                .collect(),
        )
    }

    pub fn is_empty(&self) -> bool {
        self.0.is_empty()
    }

    fn get(&self, key: &str) -> Option<&InputFile> {
        self.0.iter().find(|f| f.key == key)
    }

    /// How the files `now` differ from the `recorded` ones, by key and contents (the paths
    /// may differ: the same configuration reached from another directory), one phrase per
    /// file, each naming the key, the file and both hashes; empty when they are the same.
    /// `recorded_what` names the record in the phrases (e.g. "the interrupted run").
    pub fn differences(recorded: &Self, now: &Self, recorded_what: &str) -> Vec<String> {
        let mut out = Vec::new();
        for f in &now.0 {
            match recorded.get(&f.key) {
                Some(r) if r.sha256 == f.sha256 => {}
                Some(r) => out.push(format!(
                    "{} = {}: the file's contents differ from those {recorded_what} read{} \
                     (sha256 {} then, {} now)",
                    f.key,
                    f.path,
                    if r.path != f.path {
                        format!(" from {}", r.path)
                    } else {
                        String::new()
                    },
                    short(&r.sha256),
                    short(&f.sha256)
                )),
                None => out.push(format!(
                    "{} = {}: {recorded_what} recorded no hash of this file (sha256 {} now), so \
                     it cannot be told to be the same",
                    f.key,
                    f.path,
                    short(&f.sha256)
                )),
            }
        }
        for r in &recorded.0 {
            if now.get(&r.key).is_none() {
                out.push(format!(
                    "{} = {}: {recorded_what} read this file (sha256 {}), and it is not read now",
                    r.key,
                    r.path,
                    short(&r.sha256)
                ));
            }
        }
        out
    }
}

impl InputFiles {
    /// The first key whose file differs between `self` and `other` (by contents; a file only
    /// one of them recorded counts too): (key, this one's `PATH with sha256 HASH` or "none
    /// recorded", the other's).
    pub fn first_difference(&self, other: &Self) -> Option<(String, String, String)> {
        let show = |f: Option<&InputFile>| match f {
            Some(f) => format!("{} with sha256 {}", f.path, short(&f.sha256)),
            None => "none recorded".to_string(),
        };
        let keys = self.0.iter().chain(&other.0).map(|f| f.key.as_str());
        for key in keys {
            let (a, b) = (self.get(key), other.get(key));
            if a.map(|f| &f.sha256) != b.map(|f| &f.sha256) {
                return Some((key.to_string(), show(a), show(b)));
            }
        }
        None
    }
}

/// The first 16 hex digits of a hash, for messages.
fn short(h: &str) -> String {
    let s: String = h.chars().take(16).collect();
    if h.len() > 16 {
        format!("{s}...")
    } else {
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sha256_of_known_text() {
        // FIPS 180-2, appendix B.1
        assert_eq!(
            sha256_hex(b"abc"),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
    }

    #[test]
    fn text_round_trip_and_differences() {
        let f = |k: &str, p: &str, h: &str| InputFile {
            key: k.into(),
            path: p.into(),
            sha256: h.into(),
        };
        let a = InputFiles(vec![
            f("cosmology[0].transfer_table", "/d/a.dat", "aa"),
            f("cosmology[1].transfer_table", "/d/b.dat", "bb"),
        ]);
        assert_eq!(InputFiles::parse(&a.to_text()), a);
        assert_eq!(InputFiles::parse(""), InputFiles::default());
        // the same contents from another path: no difference
        let moved = InputFiles(vec![
            f("cosmology[0].transfer_table", "/e/a.dat", "aa"),
            f("cosmology[1].transfer_table", "/e/b.dat", "bb"),
        ]);
        assert!(InputFiles::differences(&a, &moved, "the run").is_empty());
        let changed = InputFiles(vec![
            f("cosmology[0].transfer_table", "/d/a.dat", "aa"),
            f("cosmology[1].transfer_table", "/d/b.dat", "cc"),
        ]);
        let d = InputFiles::differences(&a, &changed, "the run");
        assert_eq!(d.len(), 1, "{d:?}");
        assert!(
            d[0].contains("cosmology[1].transfer_table = /d/b.dat")
                && d[0].contains("sha256 bb then, cc now"),
            "{d:?}"
        );
        let d = InputFiles::differences(&InputFiles::default(), &a, "the store");
        assert_eq!(d.len(), 2);
        assert!(d[0].contains("recorded no hash"), "{d:?}");
    }
}
