//! Galaxies on haloes: stellar-mass–halo-mass relations (one file per published relation).

pub mod behroozi13;
