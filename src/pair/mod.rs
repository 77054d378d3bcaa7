//! Paired hosts: two Milky-Way-mass haloes in each other's field, like the Local Group.
//! `orbit` integrates their mutual orbit; `geometry` draws each pair's partner mass,
//! separation and velocity; `host::partner` adds the partner's pull, friction and tide to the
//! orbits of every subhalo of a host of a pair.

pub mod geometry;
pub mod orbit;

pub use geometry::PairGeometry;
pub use orbit::PairOrbit;
