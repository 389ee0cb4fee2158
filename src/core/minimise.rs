//! Minimise a smooth function of a few variables: a damped Newton method with central
//! differences for the gradient and the Hessian, which it returns at the minimum (the
//! curvature a Laplace approximation needs).

/// A minimum found, with the Hessian there and the iterations taken.
#[derive(Debug, Clone, PartialEq)]
pub struct Minimum {
    /// Where the minimum lies.
    pub x: Vec<f64>,
    /// The function's value there.
    pub value: f64,
    /// The Hessian there (central differences).
    pub hessian: Vec<Vec<f64>>,
    /// Newton steps taken.
    pub iterations: usize,
}

/// Step of the central differences.
const H: f64 = 1e-4;

// Matrix entries by row and column: index loops say it most plainly.
#[allow(clippy::needless_range_loop)]
fn gradient_hessian(f: &dyn Fn(&[f64]) -> f64, x: &[f64], fx: f64) -> (Vec<f64>, Vec<Vec<f64>>) {
    let n = x.len();
    let at = |moves: &[(usize, f64)]| {
        let mut y = x.to_vec();
        for &(i, d) in moves {
            y[i] += d;
        }
        f(&y)
    };
    let mut g = vec![0.0; n];
    let mut h = vec![vec![0.0; n]; n];
    for i in 0..n {
        let (up, down) = (at(&[(i, H)]), at(&[(i, -H)]));
        g[i] = (up - down) / (2.0 * H);
        h[i][i] = (up - 2.0 * fx + down) / (H * H);
        for j in 0..i {
            let v = (at(&[(i, H), (j, H)]) - at(&[(i, H), (j, -H)]) - at(&[(i, -H), (j, H)])
                + at(&[(i, -H), (j, -H)]))
                / (4.0 * H * H);
            h[i][j] = v;
            h[j][i] = v;
        }
    }
    (g, h)
}

/// The Hessian of `f` at `x` by the same central differences (the curvature of an objective
/// at a minimum found by another method).
pub fn hessian(f: &dyn Fn(&[f64]) -> f64, x: &[f64]) -> Vec<Vec<f64>> {
    gradient_hessian(f, x, f(x)).1
}

/// The Laplace covariance at the minimum of an objective that is −2 ln of a density, from its
/// Hessian `h` there: (h/2)⁻¹. None when `h` is singular.
pub fn laplace_covariance(h: &[Vec<f64>]) -> Option<Vec<Vec<f64>>> {
    let half: Vec<Vec<f64>> = h
        .iter()
        .map(|r| r.iter().map(|v| v / 2.0).collect())
        .collect();
    inverse(&half)
}

/// Solve `a·x = b` by Gaussian elimination with partial pivoting; None when singular.
pub fn solve(a: &[Vec<f64>], b: &[f64]) -> Option<Vec<f64>> {
    let n = b.len();
    let mut m: Vec<Vec<f64>> = a
        .iter()
        .zip(b)
        .map(|(row, &bi)| {
            let mut r = row.clone();
            r.push(bi);
            r
        })
        .collect();
    for c in 0..n {
        let p = (c..n).max_by(|&i, &j| m[i][c].abs().total_cmp(&m[j][c].abs()))?;
        if m[p][c].is_nan() || m[p][c].abs() <= 1e-300 {
            return None;
        }
        m.swap(c, p);
        let pivot = m[c].clone();
        for row in m.iter_mut().skip(c + 1) {
            let factor = row[c] / pivot[c];
            for (x, p) in row.iter_mut().zip(&pivot).skip(c) {
                *x -= factor * p;
            }
        }
    }
    let mut x = vec![0.0; n];
    for r in (0..n).rev() {
        let s: f64 = (r + 1..n).map(|k| m[r][k] * x[k]).sum();
        x[r] = (m[r][n] - s) / m[r][r];
    }
    x.iter().all(|v| v.is_finite()).then_some(x)
}

/// The inverse of a small matrix; None when singular.
pub fn inverse(a: &[Vec<f64>]) -> Option<Vec<Vec<f64>>> {
    let n = a.len();
    let mut cols = Vec::with_capacity(n);
    for j in 0..n {
        let e: Vec<f64> = (0..n).map(|i| f64::from(u8::from(i == j))).collect();
        cols.push(solve(a, &e)?);
    }
    Some(
        (0..n)
            .map(|i| (0..n).map(|j| cols[j][i]).collect())
            .collect(),
    )
}

/// Minimise `f` from `x0`. Each step solves (H + λ·I)·δ = −g, taking λ smaller after a step
/// that lowers f and larger after one that does not; it stops when a step no longer changes
/// x by more than 1e-9 or f by more than 1e-12 relative. None when f is not finite at `x0`
/// or no minimum is found in 200 steps.
pub fn minimise(f: &dyn Fn(&[f64]) -> f64, x0: &[f64]) -> Option<Minimum> {
    let mut x = x0.to_vec();
    let mut fx = f(&x);
    if !fx.is_finite() {
        return None;
    }
    let mut lambda = 1e-3;
    for iteration in 1..=200 {
        let (g, h) = gradient_hessian(f, &x, fx);
        if g.iter().any(|v| !v.is_finite()) {
            return None;
        }
        let mut moved = false;
        for _ in 0..60 {
            let mut a = h.clone();
            let scale = h
                .iter()
                .enumerate()
                .map(|(i, r)| r[i].abs())
                .fold(1.0, f64::max);
            for (i, row) in a.iter_mut().enumerate() {
                row[i] += lambda * scale;
            }
            let neg: Vec<f64> = g.iter().map(|v| -v).collect();
            let Some(step) = solve(&a, &neg) else {
                lambda *= 10.0;
                continue;
            };
            let y: Vec<f64> = x.iter().zip(&step).map(|(a, b)| a + b).collect();
            let fy = f(&y);
            if fy.is_finite() && fy <= fx {
                let small = step.iter().all(|s| s.abs() < 1e-9)
                    || (fx - fy).abs() <= 1e-12 * (1.0 + fx.abs());
                x = y;
                fx = fy;
                lambda = (lambda / 4.0).max(1e-12);
                moved = true;
                if small {
                    let (_, hessian) = gradient_hessian(f, &x, fx);
                    return Some(Minimum {
                        x,
                        value: fx,
                        hessian,
                        iterations: iteration,
                    });
                }
                break;
            }
            lambda *= 4.0;
        }
        if !moved {
            // No step lowers f: x is a minimum to the precision of the differences.
            let (_, hessian) = gradient_hessian(f, &x, fx);
            return Some(Minimum {
                x,
                value: fx,
                hessian,
                iterations: iteration,
            });
        }
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn finds_the_minimum_of_a_quadratic_and_its_curvature() {
        // f = (x-1)² + 2(y+2)² + x·y: gradient zero at x = 16/7, y = -18/7 (solved by hand:
        // 2(x-1) + y = 0, 4(y+2) + x = 0); Hessian [[2, 1], [1, 4]].
        let f = |v: &[f64]| (v[0] - 1.0).powi(2) + 2.0 * (v[1] + 2.0).powi(2) + v[0] * v[1];
        let m = minimise(&f, &[0.0, 0.0]).unwrap();
        assert!((m.x[0] - 16.0 / 7.0).abs() < 1e-7, "{:?}", m.x);
        assert!((m.x[1] + 18.0 / 7.0).abs() < 1e-7, "{:?}", m.x);
        assert!((m.hessian[0][0] - 2.0).abs() < 1e-4);
        assert!((m.hessian[0][1] - 1.0).abs() < 1e-4);
        assert!((m.hessian[1][1] - 4.0).abs() < 1e-4);
    }

    #[test]
    fn finds_the_minimum_of_a_curved_valley() {
        // Rosenbrock's function, minimum 0 at (1, 1).
        let f = |v: &[f64]| (1.0 - v[0]).powi(2) + 100.0 * (v[1] - v[0] * v[0]).powi(2);
        let m = minimise(&f, &[-1.2, 1.0]).unwrap();
        assert!(
            (m.x[0] - 1.0).abs() < 1e-5 && (m.x[1] - 1.0).abs() < 1e-5,
            "{:?}",
            m.x
        );
    }

    #[test]
    fn inverse_of_a_small_matrix() {
        let inv = inverse(&[vec![2.0, 1.0], vec![1.0, 4.0]]).unwrap();
        // 1/7 x [[4, -1], [-1, 2]].
        assert!((inv[0][0] - 4.0 / 7.0).abs() < 1e-12);
        assert!((inv[0][1] + 1.0 / 7.0).abs() < 1e-12);
        assert!(inverse(&[vec![1.0, 2.0], vec![2.0, 4.0]]).is_none());
    }
}
