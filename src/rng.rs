//! Random streams. Each host gets its own ChaCha8 stream derived from (master seed, grid
//! cell, host index) and a purpose, so the output of host i never depends on thread count,
//! shard split or run order, and adding draws in one stage never shifts another's.
//!
//! Generator: `rand_chacha::ChaCha8Rng` (portable and value-stable across releases). The key
//! holds the master seed and the purpose; the 64-bit stream number holds the host's global
//! identity (cosmology index, host-mass index, host index), so 2^64 hosts fit per purpose.

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;

/// Identifies the generator in output files.
pub const GENERATOR: &str =
    "ChaCha8 (rand_chacha 0.9), key = master seed + purpose, stream = host id";

/// What a stream is used for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[repr(u64)]
pub enum Stream {
    Tree = 1,
    Orbits = 2,
    Galaxies = 3,
    HostDraw = 4,
    Statistics = 5,
    /// Bootstrap weights of a host in the tests.
    Bootstrap = 6,
    /// A pair's partner mass, separation, velocity and orientation (drawn on the stream of
    /// the pair's primary).
    PairDraw = 7,
}

/// Global identity of one host within a run.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct HostId {
    pub cosmology: u16,
    /// Host-mass bin (< 1024).
    pub mass_bin: u16,
    /// Environment (`[[environment]]` table, < 32; 0 is the first, isolated by default).
    pub environment: u8,
    /// In a pair: 0 for the primary (the host of the cell's mass), 1 for its partner; 0 for
    /// an isolated host.
    pub member: u8,
    /// Host (or pair) index within its cell.
    pub index: u32,
}

impl HostId {
    /// An isolated host (environment 0).
    pub fn new(cosmology: u16, mass_bin: u16, index: u32) -> Self {
        Self {
            cosmology,
            mass_bin,
            environment: 0,
            member: 0,
            index,
        }
    }

    /// A host of environment `environment`, pair member `member` (0 when isolated).
    pub fn in_environment(self, environment: u8, member: u8) -> Self {
        Self {
            environment,
            member,
            ..self
        }
    }

    /// The other host of the same pair.
    pub fn partner(self) -> Self {
        Self {
            member: 1 - self.member.min(1),
            ..self
        }
    }

    /// 64-bit stream number: cosmology (16 bits) | environment (5 bits) | member (1 bit) |
    /// mass bin (10 bits) | index (32 bits). Isolated hosts of environment 0 keep the numbers
    /// they had before environments existed (cosmology | mass bin | index).
    pub fn stream(self) -> u64 {
        ((self.cosmology as u64) << 48)
            | (((self.environment as u64) & 0x1f) << 43)
            | (((self.member as u64) & 1) << 42)
            | (((self.mass_bin as u64) & 0x3ff) << 32)
            | self.index as u64
    }

    /// The host whose stream number (and global id in the store) is `s`.
    pub fn from_stream(s: u64) -> Self {
        Self {
            cosmology: (s >> 48) as u16,
            mass_bin: ((s >> 32) & 0x3ff) as u16,
            environment: ((s >> 43) & 0x1f) as u8,
            member: ((s >> 42) & 1) as u8,
            index: s as u32,
        }
    }
}

/// The generator of one host for one purpose.
pub fn host_rng(master_seed: u64, host: HostId, purpose: Stream) -> ChaCha8Rng {
    let mut key = [0u8; 32];
    key[..8].copy_from_slice(&master_seed.to_le_bytes());
    key[8..16].copy_from_slice(&(purpose as u64).to_le_bytes());
    key[16..24].copy_from_slice(b"retinue1");
    let mut rng = ChaCha8Rng::from_seed(key);
    rng.set_stream(host.stream());
    rng
}

/// The generator of one host's draws in one statistical test: keyed on the host's whole
/// stream number (`HostId::stream`, the id stored with its rows), so that hosts of different
/// cosmologies, mass bins, environments or pair members never share draws, and on `test`
/// (which test and which clock). Before 2026-12-04 the tests built their host from the index
/// alone, so host k of every cell drew the same numbers and comparisons between cells carried
/// correlated Monte Carlo noise (found by a review). Bytes 24-27 hold `test + 1`, which
/// `host_rng` leaves zero, so the two never share a key.
pub fn test_rng(master_seed: u64, host_stream: u64, purpose: Stream, test: u32) -> ChaCha8Rng {
    let mut key = [0u8; 32];
    key[..8].copy_from_slice(&master_seed.to_le_bytes());
    key[8..16].copy_from_slice(&(purpose as u64).to_le_bytes());
    key[16..24].copy_from_slice(b"retinue1");
    key[24..28].copy_from_slice(&(test + 1).to_le_bytes());
    let mut rng = ChaCha8Rng::from_seed(key);
    rng.set_stream(host_stream);
    rng
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::Rng;

    #[test]
    fn streams_differ_and_repeat() {
        let a: Vec<u64> = (0..4)
            .scan(host_rng(7, HostId::new(0, 0, 1), Stream::Tree), |r, _| {
                Some(r.random::<u64>())
            })
            .collect();
        let b: Vec<u64> = (0..4)
            .scan(host_rng(7, HostId::new(0, 0, 1), Stream::Tree), |r, _| {
                Some(r.random::<u64>())
            })
            .collect();
        assert_eq!(a, b);
        let mut c = host_rng(7, HostId::new(0, 0, 2), Stream::Tree);
        let mut d = host_rng(7, HostId::new(0, 0, 1), Stream::Orbits);
        assert_ne!(a[0], c.random::<u64>());
        assert_ne!(a[0], d.random::<u64>());
    }

    /// Hosts of different cells (same index) and different tests draw different numbers.
    #[test]
    fn test_streams_differ_by_cell_and_test() {
        let first = |h: HostId, t: u32| -> u64 {
            test_rng(7, h.stream(), Stream::Statistics, t).random::<u64>()
        };
        let (a, b) = (HostId::new(0, 0, 3), HostId::new(0, 1, 3));
        assert_ne!(first(a, 0), first(b, 0));
        assert_ne!(first(a, 0), first(a, 1));
        assert_ne!(first(a, 0), first(a.in_environment(1, 1), 0));
        assert_eq!(first(a, 2), first(a, 2));
        assert_ne!(
            first(a, 0),
            host_rng(7, a, Stream::Statistics).random::<u64>()
        );
    }

    /// Value stability: the first draw of a fixed stream never changes (regression).
    #[test]
    fn regress_first_draw_is_stable() {
        let mut r = host_rng(12345, HostId::new(1, 2, 3), Stream::Tree);
        let v: u64 = r.random();
        let mut r2 = host_rng(12345, HostId::new(1, 2, 3), Stream::Tree);
        assert_eq!(v, r2.random::<u64>());
        // recorded once from this implementation; a change means every output changes
        assert_eq!(v, REGRESS_FIRST_DRAW);
    }

    /// Environment and member bits round-trip and leave environment 0 as before.
    #[test]
    fn stream_numbers_round_trip() {
        let a = HostId::new(3, 999, 77);
        assert_eq!(a.stream(), (3u64 << 48) | (999u64 << 32) | 77);
        for (e, m) in [(0u8, 0u8), (1, 0), (1, 1), (31, 1)] {
            let id = a.in_environment(e, m);
            assert_eq!(HostId::from_stream(id.stream()), id);
            assert_eq!(id.partner().partner(), id);
        }
        assert_ne!(
            a.in_environment(1, 0).stream(),
            a.in_environment(1, 1).stream()
        );
    }

    const REGRESS_FIRST_DRAW: u64 = 14_010_345_281_572_668_570;
}
