//! Tables on uniform grids with cubic Hermite interpolation.
//!
//! Every smooth table in the crate (ages, growth, sigma(M), its inverse) stores values and
//! exact derivatives at the nodes, so the interpolant is C^1 and its error is O(h^4) in the
//! value and O(h^3) in the derivative. Look-ups are O(1): no search, no allocation.

/// y(x) tabulated at x_i = x0 + i dx with values `y` and derivatives `dy` (= dy/dx).
#[derive(Debug, Clone)]
pub struct UniformHermite {
    x0: f64,
    dx: f64,
    inv_dx: f64,
    y: Vec<f64>,
    dy: Vec<f64>,
}

impl UniformHermite {
    /// Build from node values and derivatives. Panics (a programming error, not user input)
    /// if fewer than two nodes or mismatched lengths are given.
    pub fn new(x0: f64, dx: f64, y: Vec<f64>, dy: Vec<f64>) -> Self {
        assert!(y.len() >= 2 && y.len() == dy.len() && dx > 0.0);
        Self {
            x0,
            dx,
            inv_dx: 1.0 / dx,
            y,
            dy,
        }
    }

    /// Build by sampling a function that returns (value, derivative) on `n` nodes.
    pub fn from_fn(x0: f64, x1: f64, n: usize, mut f: impl FnMut(f64) -> (f64, f64)) -> Self {
        let dx = (x1 - x0) / (n - 1) as f64;
        let mut y = Vec::with_capacity(n);
        let mut dy = Vec::with_capacity(n);
        for i in 0..n {
            let (v, d) = f(x0 + dx * i as f64);
            y.push(v);
            dy.push(d);
        }
        Self::new(x0, dx, y, dy)
    }

    pub fn x_min(&self) -> f64 {
        self.x0
    }

    pub fn x_max(&self) -> f64 {
        self.x0 + self.dx * (self.y.len() - 1) as f64
    }

    pub fn len(&self) -> usize {
        self.y.len()
    }

    pub fn is_empty(&self) -> bool {
        self.y.is_empty()
    }

    pub fn contains(&self, x: f64) -> bool {
        x >= self.x0 && x <= self.x_max()
    }

    pub fn nodes(&self) -> (&[f64], &[f64]) {
        (&self.y, &self.dy)
    }

    #[inline]
    fn locate(&self, x: f64) -> (usize, f64) {
        let u = (x - self.x0) * self.inv_dx;
        let last = self.y.len() - 2;
        let i = if u <= 0.0 { 0 } else { (u as usize).min(last) };
        (i, u - i as f64)
    }

    /// Interpolated value. Outside the table the end cubic is extended (callers check range).
    #[inline]
    pub fn eval(&self, x: f64) -> f64 {
        let (i, t) = self.locate(x);
        let (y0, y1) = (self.y[i], self.y[i + 1]);
        let (m0, m1) = (self.dy[i] * self.dx, self.dy[i + 1] * self.dx);
        let t2 = t * t;
        let t3 = t2 * t;
        let h00 = 2.0 * t3 - 3.0 * t2 + 1.0;
        let h10 = t3 - 2.0 * t2 + t;
        let h01 = -2.0 * t3 + 3.0 * t2;
        let h11 = t3 - t2;
        h00 * y0 + h10 * m0 + h01 * y1 + h11 * m1
    }

    /// Value and derivative together (one cell look-up).
    #[inline]
    pub fn eval_with_derivative(&self, x: f64) -> (f64, f64) {
        let (i, t) = self.locate(x);
        let (y0, y1) = (self.y[i], self.y[i + 1]);
        let (m0, m1) = (self.dy[i] * self.dx, self.dy[i + 1] * self.dx);
        let t2 = t * t;
        let t3 = t2 * t;
        let v = (2.0 * t3 - 3.0 * t2 + 1.0) * y0
            + (t3 - 2.0 * t2 + t) * m0
            + (-2.0 * t3 + 3.0 * t2) * y1
            + (t3 - t2) * m1;
        let d = ((6.0 * t2 - 6.0 * t) * y0
            + (3.0 * t2 - 4.0 * t + 1.0) * m0
            + (-6.0 * t2 + 6.0 * t) * y1
            + (3.0 * t2 - 2.0 * t) * m1)
            * self.inv_dx;
        (v, d)
    }

    /// Interpolated derivative dy/dx.
    #[inline]
    pub fn derivative(&self, x: f64) -> f64 {
        let (i, t) = self.locate(x);
        let (y0, y1) = (self.y[i], self.y[i + 1]);
        let (m0, m1) = (self.dy[i] * self.dx, self.dy[i + 1] * self.dx);
        let t2 = t * t;
        let d00 = 6.0 * t2 - 6.0 * t;
        let d10 = 3.0 * t2 - 4.0 * t + 1.0;
        let d01 = -6.0 * t2 + 6.0 * t;
        let d11 = 3.0 * t2 - 2.0 * t;
        (d00 * y0 + d10 * m0 + d01 * y1 + d11 * m1) * self.inv_dx
    }
}

/// Composite Simpson weights for n (odd) equally spaced points with step h.
pub fn simpson_weights(n: usize, h: f64) -> Vec<f64> {
    assert!(n >= 3 && n % 2 == 1);
    let mut w = vec![0.0; n];
    for (i, wi) in w.iter_mut().enumerate() {
        *wi = if i == 0 || i == n - 1 {
            h / 3.0
        } else if i % 2 == 1 {
            4.0 * h / 3.0
        } else {
            2.0 * h / 3.0
        };
    }
    w
}

/// Cumulative integral of samples `f` on a uniform grid with step h, by the trapezoid rule
/// corrected with end-point derivatives `df` (Euler–Maclaurin, O(h^4) per step).
pub fn cumulative_hermite(f: &[f64], df: &[f64], h: f64) -> Vec<f64> {
    let mut out = Vec::with_capacity(f.len());
    let mut acc = 0.0;
    out.push(0.0);
    for i in 1..f.len() {
        acc += 0.5 * h * (f[i - 1] + f[i]) + h * h / 12.0 * (df[i - 1] - df[i]);
        out.push(acc);
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn hermite_reproduces_cubics_exactly() {
        let f = |x: f64| (x * x * x - 2.0 * x + 1.0, 3.0 * x * x - 2.0);
        let t = UniformHermite::from_fn(-1.0, 2.0, 7, f);
        for &x in &[-0.93, 0.0, 0.37, 1.11, 1.99] {
            assert!((t.eval(x) - f(x).0).abs() < 1e-12);
            assert!((t.derivative(x) - f(x).1).abs() < 1e-11);
        }
    }

    #[test]
    fn hermite_error_is_fourth_order() {
        let t = UniformHermite::from_fn(0.0, 3.0, 31, |x| (x.sin(), x.cos()));
        let err = (0..1000)
            .map(|i| 3.0 * i as f64 / 999.0)
            .map(|x| (t.eval(x) - x.sin()).abs())
            .fold(0.0, f64::max);
        // h = 0.1: bound h^4 max|f''''| / 384 = 2.6e-7.
        assert!(err < 2.7e-7, "err {err}");
    }

    #[test]
    fn simpson_and_cumulative_integrate_exp() {
        let n = 101;
        let h = 1.0 / 100.0;
        let w = simpson_weights(n, h);
        let s: f64 = (0..n).map(|i| w[i] * (i as f64 * h).exp()).sum();
        assert!((s - (1f64.exp() - 1.0)).abs() < 1e-10);
        let f: Vec<f64> = (0..n).map(|i| (i as f64 * h).exp()).collect();
        let c = cumulative_hermite(&f, &f, h);
        assert!((c[n - 1] - (1f64.exp() - 1.0)).abs() < 1e-10);
    }
}
