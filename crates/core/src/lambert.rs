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
//! large z; it converges to full double precision in a handful of steps.
//! [`lambert_w0_exp`], the logarithmic form and the integrated fit's inner
//! loop, uses a closer start and a fourth-order step instead; see its
//! documentation.

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
/// logarithm, without forming the number when it would overflow.
///
/// This is the inner loop of the integrated fit (millions of calls for a
/// plate), so it is written for few transcendental calls: a starting value
/// within a few per cent everywhere (Winitzki 2003, "Uniform
/// approximations for transcendental functions", the form
/// `a·(1 − ln(1 + a)/(2 + a))` with `a = ln(1 + z)`, from memory), then the
/// fourth-order iteration of Fritsch, Shafer & Crowley (1973, Commun. ACM
/// 16, 123, from memory):
///
/// ```text
/// zₙ = ln(z/wₙ) − wₙ,  qₙ = 2(1 + wₙ)(1 + wₙ + 2zₙ/3),
/// wₙ₊₁ = wₙ·(1 + zₙ/(1 + wₙ)·(qₙ − zₙ)/(qₙ − 2zₙ))
/// ```
///
/// Two steps reach full double precision from that start; the loop stops
/// once a correction is below 1e-4 (what is left is then below 1e-17).
/// `ln(z/w)` is formed as the logarithm of the ratio, which is near eʷ and
/// so exact to rounding, for log_z ≤ 1; past that it is `log_z − ln w`,
/// accurate relative to w (and z, which may overflow, is never formed). The tests compare it with [`lambert_w0`]
/// (itself checked against SciPy) and with the identity `w + ln w = log_z`.
pub fn lambert_w0_exp(log_z: f64) -> f64 {
    lambert_w0_exp_with_log(log_z, None).0
}

/// W₀(exp(log_z)) and its natural logarithm, started from a known value
/// nearby when one is given: `near = (log_z₁, W₁)`, typically the previous
/// point of the same progress curve. The start is then the second-order
/// Taylor step `W₁ + W′·Δ + W″·Δ²/2` in Δ = log_z − log_z₁, with
/// `W′ = W/(1 + W)` and `W″ = W/(1 + W)³` (from dW/dz = W/(z(1 + W))),
/// and one Fritsch step usually suffices. Far from the known value (|Δ| >
/// 0.5) the general start of [`lambert_w0_exp`] is used. Either way the
/// iteration runs to the same stopping rule, so the result does not
/// depend on the start beyond rounding.
///
/// The logarithm comes from the iteration itself (`ln w = log_z − ln(z/w)`,
/// then corrected for the last step), which saves a call to `ln`.
pub fn lambert_w0_exp_with_log(log_z: f64, near: Option<(f64, f64)>) -> (f64, f64) {
    if log_z.is_nan() {
        return (f64::NAN, f64::NAN);
    }
    if log_z < -40.0 {
        // W(z) = z − z² + …; for z < 5e-18 the z² term is below rounding,
        // and ln W = log_z − z to the same order.
        let z = log_z.exp();
        return (z - z * z, log_z - z);
    }
    if log_z == f64::INFINITY {
        return (f64::INFINITY, f64::INFINITY);
    }
    // For small log_z, z is formed and ln(z/w) is the logarithm of a ratio
    // near eʷ, exact to rounding; ln w = log_z − ln(z/w) then has no
    // cancellation (|ln w| ≥ |log_z| − 1). For larger log_z, ln w is taken
    // directly and ln(z/w) = log_z − ln w, accurate relative to w.
    let formed = log_z <= 1.0;
    let z = if formed { log_z.exp() } else { f64::INFINITY };
    let mut w = match near {
        Some((l1, w1)) if (log_z - l1).abs() <= 0.5 && w1 > 0.0 => {
            let d = log_z - l1;
            let r = 1.0 / (1.0 + w1);
            w1 * (1.0 + d * r * (1.0 + 0.5 * d * r * r))
        }
        _ => {
            // a = ln(1 + z) without overflow: max(L, 0) + ln(1 + exp(−|L|)).
            let a = log_z.max(0.0) + (-log_z.abs()).exp().ln_1p();
            a * (1.0 - a.ln_1p() / (2.0 + a))
        }
    };
    let mut log_w = f64::NAN;
    for _ in 0..8 {
        let (log_ratio, log_w_now) = if formed {
            let r = (z / w).ln();
            (r, log_z - r)
        } else {
            let l = w.ln();
            (log_z - l, l)
        };
        let zn = log_ratio - w;
        let w1 = 1.0 + w;
        let q = 2.0 * w1 * (w1 + 2.0 * zn / 3.0);
        let correction = zn / w1 * (q - zn) / (q - 2.0 * zn);
        // ln(w·(1 + c)) = ln w + c − c²/2 + c³/3 − …
        log_w = log_w_now + correction * (1.0 - correction * (0.5 - correction / 3.0));
        w *= 1.0 + correction;
        // After a correction c the error left is about 0.02·c⁴ (measured
        // over log_z from −20 to 100), below 2e-18 for |c| ≤ 1e-4.
        if !(correction.abs() > 1e-4) {
            break;
        }
    }
    (w, log_w)
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

    /// The fast logarithmic form against the Halley iteration of
    /// [`lambert_w0`] on a dense grid of log_z (every 0.01 from −45 to 705),
    /// where both can be formed: the two methods share no code.
    #[test]
    fn log_form_matches_direct_on_a_dense_grid() {
        let mut worst: f64 = 0.0;
        for k in 0..=75_000 {
            let log_z = -45.0 + 0.01 * k as f64;
            let direct = lambert_w0(f64::exp(log_z)).unwrap();
            let logged = lambert_w0_exp(log_z);
            let error = (direct - logged).abs() / direct.abs();
            worst = worst.max(error);
            assert!(error <= 4e-15, "{log_z}: {direct} vs {logged}");
        }
        println!("worst relative difference {worst:e}");
        assert!(lambert_w0_exp(f64::NEG_INFINITY) == 0.0 && lambert_w0_exp(f64::NAN).is_nan());
    }

    /// Started from a neighbour (steps of 0.001 to 0.6 in log_z, as along a
    /// progress curve), the value and its logarithm agree with the cold
    /// start and with `ln` of the value.
    #[test]
    fn warm_start_gives_the_same_value_and_logarithm() {
        for step in [0.001, 0.02, 0.1, 0.6] {
            let mut log_z = 720.0;
            let mut previous: Option<(f64, f64)> = None;
            while log_z > -45.0 {
                let (w, log_w) = lambert_w0_exp_with_log(log_z, previous);
                let cold = lambert_w0_exp(log_z);
                assert!((w - cold).abs() <= 4e-15 * cold, "step {step}, {log_z}: {w} vs {cold}");
                assert!((log_w - w.ln()).abs() <= 4e-15 * w.ln().abs().max(1.0), "step {step}, {log_z}: ln {log_w} vs {}", w.ln());
                previous = Some((log_z, w));
                log_z -= step;
            }
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
