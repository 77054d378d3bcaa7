//! Special functions not in `std`.

/// Complementary error function (libm's port of the FreeBSD msun implementation, < 1 ulp).
#[inline]
pub fn erfc(x: f64) -> f64 {
    libm::erfc(x)
}

/// Error function.
#[inline]
pub fn erf(x: f64) -> f64 {
    libm::erf(x)
}
