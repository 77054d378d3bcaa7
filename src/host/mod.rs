//! The host: an NFW halo that follows the main branch of the host's own merger tree, plus a
//! Miyamoto–Nagai disc and a Hernquist bulge that grow with it.

pub mod evolving;
pub mod median;
pub mod partner;
pub mod potential;

pub use evolving::{DiscBulgeParams, EvolvingHost, HostOptions};
pub use partner::Partner;
pub use potential::{HostSnapshot, Potential};
