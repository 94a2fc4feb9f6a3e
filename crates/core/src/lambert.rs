//! The principal branch W₀ of the Lambert W function, written for the
//! integrated Michaelis-Menten equation.
//!
//! W(z) solves `w·exp(w) = z`. The integrated rate law has the closed form
//! `S(t) = Km·W((S0/Km)·exp((S0 − Vmax·t)/Km))`, whose argument overflows
//! `exp` when `S0/Km` is large (it does past about 709). [`lambert_w0_exp`]
//! therefore takes the logarithm of the argument and, for large
//! logarithms, solves `w + ln w = L` instead, which never forms the huge
//! number.
//!
//! Method: Halley's iteration on `w·eʷ − z` (the standard choice for W;
//! Corless, Gonnet, Hare, Jeffrey & Knuth 1996, "On the Lambert W
//! function", Adv. Comput. Math. 5, 329, eq. 5.9, from memory), started
//! from the branch-point series near `−1/e` and from `ln z − ln ln z` for
//! large z; Newton's iteration on `w + ln w − L` in the logarithmic form.
//! Both converge to full double precision in a handful of steps.

/// `−1/e`, the branch point of W.
pub const BRANCH_POINT: f64 = -0.36787944117144233;

/// W₀(z) for `z ≥ −1/e`; `None` for smaller or non-finite `z`.
///
/// An argument below `−1/e` by no more than a few rounding errors (as
/// `-1.0 / std::f64::consts::E` computes) is read as the branch point and
/// gives −1.
pub fn lambert_w0(z: f64) -> Option<f64> {
    if !z.is_finite() {
        return None;
    }
    if z == 0.0 {
        return Some(0.0);
    }
    let distance = z - BRANCH_POINT;
    if distance < -4.0 * f64::EPSILON {
        return None;
    }
    if distance <= 4.0 * f64::EPSILON {
        return Some(-1.0);
    }
    if z > 1e300 {
        return Some(lambert_w0_exp(z.ln()));
    }
    let mut w = if distance < 0.25 {
        // Series about the branch point in p = sqrt(2(e·z + 1)) (Corless et
        // al. 1996, eq. 4.22, first terms).
        let p = (2.0 * (std::f64::consts::E * z + 1.0)).max(0.0).sqrt();
        -1.0 + p - p * p / 3.0 + 11.0 / 72.0 * p * p * p
    } else if z < 3.0 {
        // W(z) ≈ ln(1 + z) is within 0.4 of W on (−0.12, 3).
        (1.0 + z).ln() * 0.85
    } else {
        let l = z.ln();
        l - l.ln()
    };
    for _ in 0..64 {
        let e = w.exp();
        let f = w * e - z;
        let w1 = w + 1.0;
        if w1 == 0.0 {
            break;
        }
        let step = f / (e * w1 - (w + 2.0) * f / (2.0 * w1));
        let next = w - step;
        if !next.is_finite() {
            break;
        }
        let done = (next - w).abs() <= 4.0 * f64::EPSILON * next.abs().max(1e-300);
        w = next;
        if done {
            break;
        }
    }
    Some(w)
}

/// W₀(exp(log_z)): the Lambert W of a positive number given by its natural
/// logarithm, without forming the number. For `log_z` above 1 the
/// equation `w + ln w = log_z` is solved by Newton's method (the function
/// is increasing and concave in w, so Newton from below converges
/// monotonically); otherwise `exp(log_z)` is safe and [`lambert_w0`] is
/// used.
pub fn lambert_w0_exp(log_z: f64) -> f64 {
    if log_z <= 1.0 {
        return lambert_w0(log_z.exp()).unwrap_or(0.0);
    }
    // Start from ln z − ln ln z, which is below the root for log_z > 1.
    let mut w = (log_z - log_z.ln()).max(1.0);
    for _ in 0..64 {
        let f = w + w.ln() - log_z;
        let next = w - f / (1.0 + 1.0 / w);
        let done = (next - w).abs() <= 4.0 * f64::EPSILON * next.abs();
        w = next;
        if done {
            break;
        }
    }
    w
}

/// dW/dz = W/(z·(1 + W)), written as `1/(exp(W)·(1 + W))` so that it is
/// finite at z = 0 (where it is 1). `None` at the branch point, where the
/// derivative is infinite.
pub fn lambert_w0_derivative(z: f64) -> Option<f64> {
    let w = lambert_w0(z)?;
    let denominator = w.exp() * (1.0 + w);
    (denominator > 0.0).then(|| 1.0 / denominator)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Published values. The omega constant Ω = W(1) =
    /// 0.5671432904097838… (OEIS A030178); W(e) = 1 and W(−1/e) = −1 follow
    /// from the definition w·eʷ = z; W(0) = 0.
    #[test]
    fn published_values() {
        let omega = lambert_w0(1.0).unwrap();
        assert!((omega - 0.5671432904097838).abs() <= 2e-16, "{omega}");
        assert!((lambert_w0(std::f64::consts::E).unwrap() - 1.0).abs() <= 2e-16);
        assert_eq!(lambert_w0(-1.0 / std::f64::consts::E), Some(-1.0));
        assert_eq!(lambert_w0(0.0), Some(0.0));
        assert_eq!(lambert_w0(-0.5), None);
        assert_eq!(lambert_w0(f64::NAN), None);
    }

    /// The defining identity w·exp(w) = z over many decades, and the
    /// logarithmic form against the direct one where both can be formed.
    #[test]
    fn defining_identity_and_log_form() {
        let mut z = -0.3678;
        while z < 1e300 {
            let w = lambert_w0(z).unwrap();
            let back = w * w.exp();
            assert!((back - z).abs() <= 1e-13 * z.abs().max(1e-3), "z {z}: w {w}, w·eʷ {back}");
            z = if z < 0.0 { z + 0.05 } else if z < 1.0 { z + 0.1 } else { z * 3.7 };
        }
        for log_z in [-30.0, -2.0, 0.5, 1.0, 1.5, 10.0, 300.0, 700.0] {
            let direct = lambert_w0(f64::exp(log_z)).unwrap();
            let logged = lambert_w0_exp(log_z);
            assert!((direct - logged).abs() <= 4e-15 * direct.abs().max(1e-300), "{log_z}: {direct} vs {logged}");
        }
        // Far past the overflow of exp: w + ln w = L holds.
        for log_z in [1e3, 1e6, 1e12] {
            let w = lambert_w0_exp(log_z);
            assert!((w + w.ln() - log_z).abs() <= 1e-15 * log_z, "{log_z}: {w}");
        }
    }

    #[test]
    fn derivative_matches_finite_differences() {
        for z in [-0.3f64, -0.1, 0.0, 0.5, 1.0, 10.0, 1e4] {
            let h = 1e-6 * f64::max(1.0, z.abs());
            let numeric = (lambert_w0(z + h).unwrap() - lambert_w0(z - h).unwrap()) / (2.0 * h);
            let analytic = lambert_w0_derivative(z).unwrap();
            assert!((numeric - analytic).abs() <= 1e-7 * analytic.abs(), "{z}: {numeric} vs {analytic}");
        }
    }
}
