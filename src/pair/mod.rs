//! Paired hosts: two Milky-Way-mass haloes in each other's field, like the Local Group.
//! `orbit` integrates their mutual orbit; `timing` is the timing argument (the point mass
//! that brings a radial pair from zero separation at the Big Bang to today's separation and
//! approach velocity); `geometry` draws each pair's partner mass, separation and velocity;
//! `host::partner` adds the partner's pull, friction and tide to the orbits of every subhalo
//! of a host of a pair.

pub mod geometry;
pub mod orbit;
pub mod timing;

pub use geometry::PairGeometry;
pub use orbit::PairOrbit;
pub use timing::{time_since_zero_separation, timing_argument_mass};
