//! `mpirun -n R retinue run CONFIG` (cargo feature `mpi`): rank k runs shard k+1 of R (a
//! contiguous block of hosts) and writes it as `STEM.shard-(k+1)-of-R.h5` beside the output;
//! the ranks then agree on success; rank 0 merges the shards into the final store (the merged
//! file is the result; the shard files are removed after a successful merge), runs the tests
//! and writes the report once. If a rank fails, every rank reports, rank 0 names the failed
//! shards, and the finished shards stay: re-run a missing one alone with
//! `retinue run CONFIG --shard K/R --out STEM.shard-K-of-R.h5`, then `retinue merge`.

use std::path::{Path, PathBuf};

use mpi::traits::*;

use super::CliError;
use retinue::run::Shard;

pub use super::run::shard_path;

/// Synthesise one shard into a path.
pub type ShardJob<'a> = &'a dyn Fn(Shard, PathBuf) -> Result<PathBuf, CliError>;
/// Merge the shards into the output and report.
pub type FinishJob<'a> = &'a dyn Fn(&[PathBuf], &Path) -> Result<(), CliError>;

/// Run under MPI when there is more than one rank; returns None when this is a single process
/// (the caller then runs normally).
pub fn run_mpi(go: ShardJob, finish: FinishJob, out: &Path) -> Option<Result<(), CliError>> {
    let universe = mpi::initialize()?;
    let world = universe.world();
    let size = world.size() as u32;
    if size <= 1 {
        return None;
    }
    let rank = world.rank() as u32;
    let shard = Shard {
        index: rank,
        count: size,
    };
    let my_path = shard_path(out, rank, size);
    let result = go(shard, my_path);
    let ok: i32 = result.is_ok() as i32;
    if let Err(e) = &result {
        eprintln!("rank {rank} (shard {}/{size}) failed: {e}", rank + 1);
    }
    let mut all = vec![0i32; size as usize];
    world.all_gather_into(&ok, &mut all[..]);
    let failed: Vec<u32> = all
        .iter()
        .enumerate()
        .filter(|(_, &v)| v == 0)
        .map(|(k, _)| k as u32 + 1)
        .collect();
    if !failed.is_empty() {
        // mpirun ends every rank as soon as one exits non-zero, so a failed rank must not exit
        // before rank 0 has printed the summary: rank 0 prints it here, then all meet at a
        // barrier (without it, CI once saw the summary go missing).
        if rank == 0 {
            let summary = format!(
                "shards {failed:?} of {size} failed; the others are finished. Each failed rank said why above (a failed host, or a file in the way of its shard file, which needs --overwrite); once that is dealt with, re-run each failed one with --shard K/{size} --out {}, then retinue merge",
                shard_path(out, failed[0] - 1, size).display()
            );
            eprintln!("error: {summary}");
            use std::io::Write;
            let _ = std::io::stderr().flush();
        }
        world.barrier();
        return Some(if rank == 0 {
            Err(CliError::Reported)
        } else {
            result.map(|_| ())
        });
    }
    if rank != 0 {
        return Some(result.map(|_| ()));
    }
    let shards: Vec<PathBuf> = (0..size).map(|k| shard_path(out, k, size)).collect();
    Some(finish(&shards, out))
}
