//! Halo structure: NFW profiles, spherical-overdensity mass definitions and conversions,
//! concentration–mass relations.

pub mod concentration;
pub mod definitions;
pub mod nfw;

pub use definitions::MassDefinition;
pub use nfw::Nfw;
