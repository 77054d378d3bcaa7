//! The subhalo table of a store as one CSV file, each row joined with its host: for users
//! who work in a spreadsheet or a data-frame library without HDF5. Streamed host chunk by
//! host chunk (memory stays flat in the number of hosts) and written through a temporary
//! file renamed into place.

use std::io::Write;
use std::path::{Path, PathBuf};

use super::store::{n_hosts_in, stored_sub_column, HOST_COLUMNS, SUB_COLUMNS};
use super::{AtomicPath, IoError};

/// Host columns copied onto every row (prefixed `host_` where the name is not already).
const HOST_JOIN: [&str; 8] = [
    "host_index",
    "cosmology_index",
    "mass_bin",
    "environment",
    "pair_member",
    "m_vir_msun",
    "r_vir_kpc",
    "concentration",
];

/// Names of a cell: (cosmology label, host-mass label) of (cosmology index, cell code,
/// `stats::cells::cell_code`).
pub struct CellNames<'a> {
    pub of: &'a dyn Fn(u16, u16) -> (String, String),
}

/// A CSV field: quoted when it holds a comma, a quote or a line break (RFC 4180).
fn field(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// A number as written: integers exactly, other values in Rust's shortest round-trip form,
/// NaN as `nan` (which pandas and the `csv` readers of most languages take as missing).
fn number(x: f64) -> String {
    if x.is_nan() {
        "nan".into()
    } else if x.fract() == 0.0 && x.abs() < 1e15 {
        format!("{}", x as i64)
    } else {
        format!("{x}")
    }
}

/// Write the subhalo rows of the hosts whose cell `keep(cosmology, cell code)` accepts to
/// `out` as CSV: `cosmology`, `host_mass_msun` (the cell's names), the host's index, cell
/// indices, virial mass and radius and concentration, then every column of /subhalos in the
/// store's order (units in the names, as in the store). Returns the number of rows.
pub fn export_subhalos_csv(
    store: &Path,
    out: &Path,
    names: &CellNames,
    keep: &dyn Fn(u16, u16) -> bool,
    chunk: usize,
) -> Result<u64, IoError> {
    let atomic = AtomicPath::new(out);
    let tmp: PathBuf = atomic.temp_path.clone();
    let file = std::fs::File::create(&tmp).map_err(|e| IoError::fs(&tmp, e))?;
    let mut w = std::io::BufWriter::new(file);
    let e = |x| IoError::hdf5(store, x);
    let f = hdf5::File::open(store).map_err(e)?;
    let h = f.group("hosts").map_err(e)?;
    let s = f.group("subhalos").map_err(e)?;
    let sub_names: Vec<&str> = SUB_COLUMNS.iter().map(|c| c.0).collect();
    debug_assert!(HOST_JOIN
        .iter()
        .all(|n| HOST_COLUMNS.iter().any(|c| c.0 == *n)));
    let mut header = vec!["cosmology".to_string(), "host_mass_msun".to_string()];
    header.extend(HOST_JOIN.iter().map(|n| {
        if n.starts_with("host_") {
            n.to_string()
        } else {
            format!("host_{n}")
        }
    }));
    header.extend(sub_names.iter().map(|n| {
        // the subhalo's own host_index duplicates the joined one: keep both, named apart
        if *n == "host_index" {
            "sub_host_index".to_string()
        } else {
            n.to_string()
        }
    }));
    let io = |x: std::io::Error| IoError::fs(&tmp, x);
    writeln!(w, "{}", header.join(",")).map_err(io)?;
    let n = n_hosts_in(store)?;
    let read =
        |g: &hdf5::Group, name: &str, r: std::ops::Range<usize>| -> Result<Vec<f64>, IoError> {
            Ok(g.dataset(name)
                .and_then(|d| d.read_slice_1d::<f64, _>(r))
                .map_err(e)?
                .to_vec())
        };
    let mut rows = 0u64;
    let mut h0 = 0;
    while h0 < n {
        let h1 = (h0 + chunk.max(1)).min(n);
        let hr = h0..h1;
        let hosts: Vec<Vec<f64>> = HOST_JOIN
            .iter()
            .map(|c| read(&h, c, hr.clone()))
            .collect::<Result<_, _>>()?;
        let offs = read(&h, "sub_offset", hr.clone())?;
        let counts = read(&h, "sub_count", hr.clone())?;
        let s0 = offs.first().copied().unwrap_or(0.0) as usize;
        let s1 = match (offs.last(), counts.last()) {
            (Some(&o), Some(&c)) => (o + c) as usize,
            _ => s0,
        };
        let subs: Vec<Vec<f64>> = sub_names
            .iter()
            .map(|c| read(&s, stored_sub_column(&s, c), s0..s1))
            .collect::<Result<_, _>>()?;
        for k in 0..(h1 - h0) {
            let ci = hosts[1][k] as u16;
            let code = crate::stats::cells::cell_code(
                hosts[2][k] as u16,
                hosts[3][k] as u8,
                hosts[4][k] as u8,
            );
            if !keep(ci, code) {
                continue;
            }
            let (cn, mn) = (names.of)(ci, code);
            let cell = format!("{},{}", field(&cn), field(&mn));
            let host: Vec<String> = hosts.iter().map(|c| number(c[k])).collect();
            let host = host.join(",");
            let a = offs[k] as usize - s0;
            for i in a..a + counts[k] as usize {
                let row: Vec<String> = subs.iter().map(|c| number(c[i])).collect();
                writeln!(w, "{cell},{host},{}", row.join(",")).map_err(io)?;
                rows += 1;
            }
        }
        h0 = h1;
    }
    w.flush().map_err(io)?;
    drop(w);
    atomic.commit()?;
    Ok(rows)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_and_fields() {
        assert_eq!(number(3.0), "3");
        assert_eq!(number(-2.0), "-2");
        assert_eq!(number(1.5e-7), "0.00000015");
        assert_eq!(number(1.2e12), "1200000000000");
        assert_eq!(number(f64::NAN), "nan");
        let x = 0.1 + 0.2;
        assert_eq!(number(x).parse::<f64>().unwrap(), x);
        assert_eq!(field("low s8"), "low s8");
        assert_eq!(field("a,b"), "\"a,b\"");
        assert_eq!(field("say \"x\""), "\"say \"\"x\"\"\"");
    }
}
