//! Initial rates from simulated time courses.
//!
//! Reference: the exact integrated Michaelis-Menten progress curve,
//! S0 − S + Km·ln(S0/S) = Vmax·t (the textbook integrated rate law), solved
//! here by bisection on that implicit equation, independently of the
//! crate's Lambert W closed form; the true initial rate is
//! v0 = Vmax·S0/(Km + S0). Absorbance follows Beer-Lambert with NADH's
//! ε340 = 6220 M⁻¹ cm⁻¹ (Horecker & Kornberg 1948, from memory). Noise is
//! Gaussian from a seeded generator (SplitMix64 with Box-Muller), so every
//! run sees the same numbers. The data are simulated, not measurements.

use turnover_core::random::SplitMix64;
use turnover_core::progress::fit_progress;
use turnover_core::traces::{analyse_traces, TraceRequest, WindowOverride};

/// Open-interval uniforms (never 0, so ln is finite) and Box-Muller
/// normals on top of the core's seeded SplitMix64 bits.
struct Rng(SplitMix64);

impl Rng {
    fn uniform(&mut self) -> f64 {
        ((self.0.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    fn normal(&mut self) -> f64 {
        let (u, v) = (self.uniform(), self.uniform());
        (-2.0 * u.ln()).sqrt() * (std::f64::consts::TAU * v).cos()
    }
}

/// Product at time t by bisection on the implicit integrated rate law.
fn exact_product(t: f64, s0: f64, km: f64, vmax: f64) -> f64 {
    let (mut lo, mut hi) = (0.0f64, s0);
    for _ in 0..200 {
        let s = 0.5 * (lo + hi);
        if s <= 0.0 || lo == hi {
            break;
        }
        // g(S) = S0 − S + Km ln(S0/S) − Vmax t decreases in S.
        let g = s0 - s + km * (s0 / s).ln() - vmax * t;
        if g > 0.0 {
            lo = s;
        } else {
            hi = s;
        }
    }
    s0 - 0.5 * (lo + hi)
}

const EPSILON: f64 = 6220.0;
const PATH: f64 = 0.6;

struct Plate {
    traces: String,
    layout: String,
    truth: Vec<(String, f64, f64)>, // name, S0, v0
}

/// A plate of `wells` traces at the [S]0 values cycling through
/// `concentrations`, `points` readings every `step` minutes.
fn plate(seed: u64, wells: usize, points: usize, step: f64, km: f64, vmax: f64, noise: f64, concentrations: &[f64]) -> Plate {
    let mut rng = Rng(SplitMix64::new(seed));
    let names: Vec<String> = (0..wells).map(|i| format!("{}{}", (b'A' + (i / 24) as u8) as char, i % 24 + 1)).collect();
    let mut traces = format!("# simulated plate, seed {seed}\ntime (min)\t{}\n", names.join("\t"));
    let s0: Vec<f64> = (0..wells).map(|i| concentrations[i % concentrations.len()]).collect();
    let offsets: Vec<f64> = (0..wells).map(|_| 0.04 + 0.02 * rng.uniform()).collect();
    for j in 0..points {
        let t = j as f64 * step;
        traces.push_str(&format!("{t}"));
        for w in 0..wells {
            let a = offsets[w] + exact_product(t, s0[w], km, vmax) * 1e-6 * EPSILON * PATH + noise * rng.normal();
            traces.push_str(&format!("\t{a:.6}"));
        }
        traces.push('\n');
    }
    let mut layout = String::from("trace\tS (µM)\trole\n");
    for (w, name) in names.iter().enumerate() {
        layout.push_str(&format!("{name}\t{}\tsample\n", s0[w]));
    }
    let truth = names.iter().zip(&s0).map(|(n, s)| (n.clone(), *s, vmax * s / (km + s))).collect();
    Plate { traces, layout, truth }
}

fn request(p: &Plate) -> TraceRequest {
    TraceRequest {
        traces: p.traces.clone(),
        layout: p.layout.clone(),
        epsilon: Some(EPSILON),
        path_cm: Some(PATH),
        ..TraceRequest::default()
    }
}

/// The automatic window's rates agree with the exact initial rates within
/// three of their standard errors in at least 95 % of traces, over
/// several plates and noise levels.
#[test]
fn automatic_windows_recover_initial_rates() {
    let mut total = 0;
    let mut within = 0;
    let mut worst: f64 = 0.0;
    for (seed, noise) in [(1u64, 0.0005), (2, 0.001), (3, 0.002), (4, 0.004)] {
        let p = plate(seed, 96, 100, 0.5, 50.0, 2.0, noise, &[5.0, 10.0, 20.0, 40.0, 80.0, 160.0, 320.0, 640.0]);
        let result = analyse_traces(&request(&p)).unwrap();
        for (trace, (name, _, v0)) in result.traces.iter().zip(&p.truth) {
            assert_eq!(&trace.name, name);
            let (rate, se) = (trace.rate.unwrap(), trace.rate_se.unwrap());
            let z = (rate - v0).abs() / se;
            worst = worst.max(z);
            total += 1;
            within += usize::from(z <= 3.0);
            assert!(trace.fraction_converted.unwrap() <= 0.10 + 1e-9 || trace.flags.contains(&"depletion".to_string()));
        }
    }
    let share = within as f64 / total as f64;
    println!("{within} of {total} rates within 3 SE of v0 ({:.1} %), worst |z| = {worst:.2}", share * 100.0);
    assert!(share >= 0.95, "{within} of {total} within 3 SE");
}

/// Where more than 10 % of [S]0 is used before even the shortest window
/// ends, the trace is flagged `depletion`; where it is not, it is not.
#[test]
fn depletion_is_flagged() {
    // Km 50 µM, Vmax 20 µM/min, readings every 0.5 min: at [S]0 = 2 µM the
    // first five points (2 min) use nearly all of it; at 500 µM, 2 min use
    // about 7 %.
    let p = plate(11, 4, 60, 0.5, 50.0, 20.0, 0.0005, &[2.0, 5.0, 500.0, 2000.0]);
    let result = analyse_traces(&request(&p)).unwrap();
    for trace in &result.traces {
        let s0 = trace.s.unwrap();
        let consumed = exact_product(trace.window_end.unwrap(), s0, 50.0, 20.0) / s0;
        let flagged = trace.flags.contains(&"depletion".to_string());
        println!("{}: S0 {s0}, window to {} min, {:.1} % used, flags {:?}", trace.name, trace.window_end.unwrap(), consumed * 100.0, trace.flags);
        assert_eq!(flagged, consumed > 0.10, "{} used {:.3}", trace.name, consumed);
    }
    assert!(result.traces[0].flags.contains(&"depletion".to_string()));
}

/// A window set by hand is used as given and marked, and a trace can be
/// left out of the rate table.
#[test]
fn overrides_are_honoured() {
    let p = plate(5, 8, 40, 0.5, 50.0, 2.0, 0.001, &[10.0, 20.0, 40.0, 80.0]);
    let mut req = request(&p);
    req.windows = vec![WindowOverride { trace: "A2".into(), start: 1.0, end: 4.0 }];
    req.excluded = vec!["A3".into()];
    let result = analyse_traces(&req).unwrap();
    let a2 = result.traces.iter().find(|t| t.name == "A2").unwrap();
    assert!(a2.manual_window);
    assert_eq!((a2.window_start, a2.window_end, a2.window_points), (Some(1.0), Some(4.0), 7));
    assert!(result.traces[2].flags.contains(&"excluded".to_string()));
    assert!(!result.rate_links.iter().any(|l| l.trace == "A3"));
    assert_eq!(result.rate_links.len(), 7);
    // The rate table is one the rate fit reads.
    let analysis = turnover_core::rates::analyse_rates(&turnover_core::rates::RateRequest {
        text: result.rate_table.clone(),
        ..Default::default()
    })
    .unwrap();
    assert_eq!(analysis.fit.n, 7);
    assert_eq!(analysis.units.rate.as_deref(), Some("µM/min"));
}

/// The integrated fit recovers the Km and Vmax the traces were made with,
/// within 3 standard errors.
#[test]
fn integrated_fit_recovers_the_constants() {
    let p = plate(21, 24, 100, 0.5, 50.0, 2.0, 0.001, &[10.0, 25.0, 50.0, 100.0, 200.0, 400.0]);
    let analysis = analyse_traces(&request(&p)).unwrap();
    let fit = fit_progress(&analysis).unwrap();
    let s = &fit.summary;
    assert!(s.converged, "{:?}", s.termination);
    assert_eq!(s.parameters.len(), 26);
    let (km, vmax) = (&s.parameters[0], &s.parameters[1]);
    println!("Km {} ± {:?}, Vmax {} ± {:?}", km.value, km.std_error, vmax.value, vmax.std_error);
    assert!((km.value - 50.0).abs() <= 3.0 * km.std_error.unwrap());
    assert!((vmax.value - 2.0).abs() <= 3.0 * vmax.std_error.unwrap());
    assert_eq!(s.dof, 24 * 100 - 26);
}

/// Lambert W against SciPy: `scipy.special.lambertw(z, k=0)` on 261
/// points from just above −1/e to 1e300, written by
/// tests/scipy/lambertw_grid.py into tests/data/lambertw/scipy_grid.csv.
/// Agreement to 4e-15 relative (or absolute near W = 0); near the branch
/// point, where W has infinite slope, the SciPy value is itself only as
/// good as z's last digit allows, so the bound there is scaled by the
/// condition number |z·W'/W|.
#[test]
fn lambert_w_matches_scipy() {
    use turnover_core::lambert::lambert_w0;
    let text = include_str!("data/lambertw/scipy_grid.csv");
    let (mut passed, mut failed) = (0, 0);
    let mut worst: f64 = 0.0;
    for line in text.lines().filter(|l| !l.starts_with('#') && !l.starts_with('z')) {
        let (z, w) = line.split_once(',').unwrap();
        let (z, expected): (f64, f64) = (z.parse().unwrap(), w.parse().unwrap());
        let w = lambert_w0(z).unwrap();
        let condition = if expected != 0.0 { (1.0 / (1.0 + expected)).abs().max(1.0) } else { 1.0 };
        let error = if expected == 0.0 { w.abs() } else { (w - expected).abs() / expected.abs() };
        worst = worst.max(error / condition);
        if error <= 4e-15 * condition {
            passed += 1;
        } else {
            failed += 1;
            println!("z = {z:e}: W = {w:e}, SciPy {expected:e}, relative error {error:e}");
        }
    }
    println!("Lambert W vs SciPy: {passed} passed, {failed} failed, worst scaled error {worst:e}");
    assert_eq!(failed, 0);
    assert!(passed >= 261);
}

/// Benchmark, not a test of speed: `cargo test --release -p turnover-tests
/// --test traces -- --ignored --nocapture`. Times the rates for a
/// 384-well plate of 100 points and the whole-curve fit, and prints each as
/// a ratio to a reference computed in the same run: a plain least-squares
/// line through every full trace (the least any rate finder must do).
#[test]
#[ignore]
fn benchmark_384_wells() {
    use std::time::Instant;
    let p = plate(99, 384, 100, 0.25, 50.0, 2.0, 0.001, &[5.0, 10.0, 20.0, 40.0, 80.0, 160.0, 320.0, 640.0]);
    // The page's path: window rates only (v0 is asked for separately).
    let req = request(&p);
    let reference = || {
        let t0 = Instant::now();
        let mut total = 0.0;
        for _ in 0..20 {
            let table: Vec<Vec<f64>> = p.traces.lines().skip(2).map(|l| l.split('\t').map(|c| c.parse().unwrap()).collect()).collect();
            for w in 1..=384 {
                let x: Vec<f64> = table.iter().map(|r| r[0]).collect();
                let y: Vec<f64> = table.iter().map(|r| r[w]).collect();
                total += turnover_core::traces::straight_line(&x, &y).unwrap().slope;
            }
        }
        assert!(total.is_finite());
        t0.elapsed().as_secs_f64() / 20.0
    };
    let base = reference();
    let t0 = Instant::now();
    let analysis = analyse_traces(&req).unwrap();
    let rates = t0.elapsed().as_secs_f64();
    let t1 = Instant::now();
    let fit = fit_progress(&analysis).unwrap();
    let whole = t1.elapsed().as_secs_f64();
    assert!(fit.summary.converged);
    println!(
        "384 wells × 100 points: reference lines {:.2} ms; rates {:.1} ms ({:.0}× reference); whole-curve fit {:.1} ms ({:.0}× reference)",
        base * 1e3, rates * 1e3, rates / base, whole * 1e3, whole / base
    );
}

/// A plate built from product curves given as functions of time (µM
/// against minutes), with an optional [E] per trace, read every 0.5 min.
fn custom_plate(seed: u64, points: usize, noise: f64, wells: &[(&str, f64, Option<f64>, &dyn Fn(f64) -> f64)]) -> TraceRequest {
    let mut rng = Rng(SplitMix64::new(seed));
    let names: Vec<&str> = wells.iter().map(|w| w.0).collect();
    let mut traces = format!("time (min)\t{}\n", names.join("\t"));
    for j in 0..points {
        let t = j as f64 * 0.5;
        traces.push_str(&format!("{t}"));
        for (_, _, _, product) in wells {
            let a = 0.05 + product(t) * 1e-6 * EPSILON * PATH + noise * rng.normal();
            traces.push_str(&format!("\t{a:.7}"));
        }
        traces.push('\n');
    }
    let mut layout = String::from("trace\tS (µM)\tE (nM)\n");
    for (name, s, e, _) in wells {
        layout.push_str(&format!("{name}\t{s}\t{}\n", e.map_or(String::new(), |e| e.to_string())));
    }
    TraceRequest { traces, layout, epsilon: Some(EPSILON), path_cm: Some(PATH), ..TraceRequest::default() }
}

/// Lag and burst flags fire on traces that have them and stay silent on
/// plain ones, over 20 seeds. The shapes are the usual textbook forms
/// (common practice, no source): a hysteretic lag P = v·(t − τ(1 − e^(−t/τ)))
/// with τ = 5 min, a pre-steady-state burst P = A(1 − e^(−kt)) + v·t with
/// A = 15 µM and k = 1/min, and plain traces, both straight (v·t, [S]0 far
/// above what is used) and Michaelis-Menten with some depletion (the exact
/// integrated law, Km 50 µM, [S]0 200 µM), whose slowing must not be read as
/// a burst. Noise 0.001 A on 0.0037 A per µM.
#[test]
fn lag_and_burst_flags_fire_only_where_they_should() {
    let lag = |t: f64| 2.0 * (t - 5.0 * (1.0 - (-t / 5.0).exp()));
    let burst = |t: f64| 15.0 * (1.0 - (-t).exp()) + 1.0 * t;
    let straight = |t: f64| 2.0 * t;
    let depleting = |t: f64| exact_product(t, 200.0, 50.0, 10.0);
    let wells: [(&str, f64, Option<f64>, &dyn Fn(f64) -> f64); 4] =
        [("L1", 20000.0, None, &lag), ("B1", 20000.0, None, &burst), ("P1", 20000.0, None, &straight), ("M1", 200.0, None, &depleting)];
    let mut fired = std::collections::BTreeMap::<(&str, &str), usize>::new();
    for seed in 1..=20u64 {
        let result = analyse_traces(&custom_plate(seed, 100, 0.001, &wells)).unwrap();
        for trace in &result.traces {
            for word in ["lag", "burst"] {
                if trace.flags.iter().any(|f| f == word) {
                    let name = wells.iter().map(|w| w.0).find(|n| *n == trace.name).unwrap();
                    *fired.entry((name, word)).or_default() += 1;
                }
            }
        }
    }
    println!("flag counts over 20 seeds: {fired:?}");
    let count = |name: &str, word: &str| fired.get(&(name, word)).copied().unwrap_or(0);
    assert_eq!(count("L1", "lag"), 20, "lag missed");
    assert_eq!(count("B1", "burst"), 20, "burst missed");
    assert_eq!(count("L1", "burst") + count("B1", "lag"), 0, "lag and burst confused");
    for plain in ["P1", "M1"] {
        assert_eq!(count(plain, "lag") + count(plain, "burst"), 0, "{plain} flagged");
    }
}

/// Ordinary least squares by hand, about the means (the textbook
/// formulas): slope, intercept and their standard errors with
/// s² = RSS/(n − 2).
fn hand_line(x: &[f64], y: &[f64]) -> (f64, f64, f64, f64) {
    let n = x.len() as f64;
    let mx = x.iter().sum::<f64>() / n;
    let my = y.iter().sum::<f64>() / n;
    let sxx: f64 = x.iter().map(|v| (v - mx) * (v - mx)).sum();
    let sxy: f64 = x.iter().zip(y).map(|(a, b)| (a - mx) * (b - my)).sum();
    let slope = sxy / sxx;
    let intercept = my - slope * mx;
    let rss: f64 = x.iter().zip(y).map(|(a, b)| (b - intercept - slope * a).powi(2)).sum();
    let s2 = rss / (n - 2.0);
    (slope, intercept, (s2 / sxx).sqrt(), (s2 * (1.0 / n + mx * mx / sxx)).sqrt())
}

/// The v-against-[E] assay check. Three conditions (three [S]): rates
/// proportional to [E] (0.8 µM/min per nM), rates with a background of
/// 1.5 µM/min at every [E] (a line that misses zero), and rates that
/// saturate in [E] (v = 6·E/(2 + E), not proportional). The check's line
/// must equal an ordinary least-squares line computed by hand from the rates
/// the analysis reported (1e-9 relative); the proportional set must pass
/// through zero and show no curvature, the background set must not pass
/// through zero, and the saturating set must show curvature (p < 0.05).
#[test]
fn enzyme_check_lines_and_verdicts() {
    let levels = [0.5, 1.0, 2.0, 4.0, 6.0, 8.0];
    let mut curves: Vec<(String, f64, Option<f64>, Box<dyn Fn(f64) -> f64>)> = Vec::new();
    for &e in &levels {
        curves.push((format!("P{e}"), 10000.0, Some(e), Box::new(move |t| 0.8 * e * t)));
        curves.push((format!("O{e}"), 20000.0, Some(e), Box::new(move |t| (1.5 + 0.8 * e) * t)));
        curves.push((format!("S{e}"), 30000.0, Some(e), Box::new(move |t| 6.0 * e / (2.0 + e) * t)));
    }
    let wells: Vec<(&str, f64, Option<f64>, &dyn Fn(f64) -> f64)> =
        curves.iter().map(|(n, s, e, f)| (n.as_str(), *s, *e, f.as_ref() as &dyn Fn(f64) -> f64)).collect();
    let result = analyse_traces(&custom_plate(77, 40, 0.0005, &wells)).unwrap();
    assert_eq!(result.enzyme_checks.len(), 3);
    for check in &result.enzyme_checks {
        let x: Vec<f64> = check.points.iter().map(|p| p.0).collect();
        let y: Vec<f64> = check.points.iter().map(|p| p.1).collect();
        for (e, v, name) in &check.points {
            let trace = result.traces.iter().find(|t| &t.name == name).unwrap();
            assert_eq!((trace.e, trace.rate), (Some(*e), Some(*v)));
        }
        let (slope, intercept, slope_se, intercept_se) = hand_line(&x, &y);
        let close = |a: f64, b: f64| (a - b).abs() <= 1e-9 * b.abs().max(1e-12);
        assert!(close(check.slope, slope) && close(check.intercept, intercept), "{check:?}");
        assert!(close(check.slope_se.unwrap(), slope_se) && close(check.intercept_se.unwrap(), intercept_se), "{check:?}");
        println!(
            "[S] {:?}: slope {:.5} ± {:.2e}, intercept {:.4} ± {:.2e}, through zero {:?}, curvature p {:?}",
            check.s, check.slope, slope_se, check.intercept, intercept_se, check.intercept_zero, check.curvature_p
        );
        match check.s {
            Some(s) if s == 10000.0 => {
                assert_eq!(check.intercept_zero, Some(true));
                assert!(check.curvature_p.unwrap() >= 0.05);
                assert!((check.slope - 0.8).abs() <= 3.0 * slope_se, "slope {} against 0.8", check.slope);
                assert!(check.messages.is_empty(), "{:?}", check.messages);
            }
            Some(s) if s == 20000.0 => {
                assert_eq!(check.intercept_zero, Some(false));
                assert!((check.intercept - 1.5).abs() <= 3.0 * intercept_se);
                assert!(check.messages.iter().any(|m| m.contains("does not pass through zero")));
            }
            _ => {
                assert!(check.curvature_p.unwrap() < 0.05, "{:?}", check.curvature_p);
                assert!(check.messages.iter().any(|m| m.contains("not proportional")));
            }
        }
    }
}

/// Goal (f) on the noise-free plate: Km 20 µM, Vmax 2 µM/min, [S]0 at 5,
/// 10, 20, 40, 80 and 160 µM (0.25–8×Km), two wells each, readings every
/// 0.5 min for 30 min (the design, invented numbers). The
/// early-trace model's v0 must recover the exact initial rate (bisection on
/// the implicit integrated rate law, above) to 0.5% in every well; the
/// window's rate is printed beside it (−6.3% at 5 µM: the straight-line
/// bias the new estimate answers).
#[test]
fn early_trace_model_recovers_v0_on_the_noise_free_plate() {
    let (km, vmax) = (20.0, 2.0);
    let concentrations = [5.0, 10.0, 20.0, 40.0, 80.0, 160.0];
    let exact = plate(1, 12, 61, 0.5, km, vmax, 0.0, &concentrations);
    let result = analyse_traces(&TraceRequest { fit_v0: true, ..request(&exact) }).unwrap();
    for (trace, (name, s0, v0)) in result.traces.iter().zip(&exact.truth) {
        let found = trace.v0.unwrap_or_else(|| panic!("{name}: no v0"));
        let window = trace.rate.unwrap();
        println!("noise-free {name} [S]0 {s0}: v0 {:+.3}%, window {:+.3}%", 100.0 * (found / v0 - 1.0), 100.0 * (window / v0 - 1.0));
        assert!((found / v0 - 1.0).abs() < 0.005, "{name} [S]0 {s0}: v0 {found} vs {v0}");
        assert!(trace.v0_ci_low.unwrap() <= found && found <= trace.v0_ci_high.unwrap());
    }
}

/// With `rates_from_v0`, the rate table sent to the Michaelis-Menten fit
/// holds each trace's v0 (the same noise-free plate as above, invented
/// numbers), and says so in a note; without `fit_v0` it keeps the
/// windows' rates and says why.
#[test]
fn the_rate_table_can_take_the_curvature_aware_v0() {
    let exact = plate(1, 12, 61, 0.5, 20.0, 2.0, 0.0, &[5.0, 40.0, 160.0]);
    let result = analyse_traces(&TraceRequest { fit_v0: true, rates_from_v0: true, ..request(&exact) }).unwrap();
    let rows: Vec<f64> = result.rate_table.lines().skip(1).map(|l| l.split('\t').nth(1).unwrap().parse().unwrap()).collect();
    let v0: Vec<f64> = result.traces.iter().filter(|t| t.s.is_some()).map(|t| t.v0.unwrap()).collect();
    assert_eq!(rows, v0);
    assert!(result.notes.iter().any(|n| n.contains("curvature-aware v0")), "{:?}", result.notes);
    let windows = analyse_traces(&TraceRequest { rates_from_v0: true, ..request(&exact) }).unwrap();
    let rows: Vec<f64> = windows.rate_table.lines().skip(1).map(|l| l.split('\t').nth(1).unwrap().parse().unwrap()).collect();
    assert_eq!(rows, windows.traces.iter().filter(|t| t.s.is_some()).map(|t| t.rate.unwrap()).collect::<Vec<_>>());
    assert!(windows.notes.iter().any(|n| n.contains("only when it is fitted")));
}

/// Goal (f): initial rates on simulated plates. Design (invented, the
/// issue's): Km 20 µM, Vmax 2 µM/min, [S]0 at 5, 10, 20, 40, 80 and 160 µM
/// (0.25–8×Km), two wells each, readings every 0.5 min for 30 min, NADH
/// absorbance (ε 6220, 0.6 cm), noise SD 0.001 and 0.004 absorbance units
/// (seeds 700 + plate and 900 + plate). Quick: 20 plates per noise level;
/// full (`TURNOVER_FULL_COVERAGE=1`): 400. Per [S]0 and noise level, for
/// `v0` (the early-trace model) the goals are |bias| < 1% of v0 (plus
/// twice the Monte Carlo error), coverage of its 95% interval 93–97% (plus
/// twice the Monte Carlo error), and MSE at most 1.5× that of the
/// per-trace integrated fit to the whole trace (the benchmark). The
/// window's rate is reported beside it, not checked (its bias is the
/// finding the new estimate answers).
///
/// **Full run** (400 plates per noise level, 800 traces per [S]0): every
/// point within the goals and their Monte Carlo margin when this was
/// written; the hardest, [S]0 = 5 µM (0.25×Km) at noise 0.004 (a
/// signal-to-noise ratio of about 5 over the whole trace), had v0 bias
/// −1.85% (Monte Carlo SE 1.09%) and coverage 93.9%. The MSE goal is met by
/// construction: v0 *is* the per-trace integrated fit (the benchmark is the
/// same fit with no conversion limit, which the estimator also uses).
/// `TURNOVER_FULL_COVERAGE=1 cargo test --release -p turnover-tests --test
/// traces early_trace -- --nocapture` (about 25 minutes).
#[test]
fn early_trace_model_recovers_initial_rates() {
    use turnover_core::early::integrated_initial_rate_with;
    let (km, vmax) = (20.0, 2.0);
    let concentrations = [5.0, 10.0, 20.0, 40.0, 80.0, 160.0];
    let plates = if std::env::var_os("TURNOVER_FULL_COVERAGE").is_some() { 400 } else { 20 };
    let mut failures = Vec::new();
    for (noise, seed_base) in [(0.001, 700u64), (0.004, 900)] {
        // Per [S]0: (relative errors, covered, benchmark squared errors, window errors, window covered).
        let mut by_s: Vec<(Vec<f64>, usize, Vec<f64>, Vec<f64>, usize)> = vec![Default::default(); concentrations.len()];
        let mut missing = 0;
        for k in 0..plates {
            let p = plate(seed_base + k as u64, 12, 61, 0.5, km, vmax, noise, &concentrations);
            let result = analyse_traces(&TraceRequest { fit_v0: true, ..request(&p) }).unwrap();
            for (trace, (_, s0, v0)) in result.traces.iter().zip(&p.truth) {
                let c = concentrations.iter().position(|x| x == s0).unwrap();
                let (Some(v), Some(low), Some(high)) = (trace.v0, trace.v0_ci_low, trace.v0_ci_high) else {
                    missing += 1;
                    continue;
                };
                let values: Vec<(f64, f64)> =
                    trace.times.iter().zip(&trace.values).filter_map(|(t, y)| y.map(|y| (*t, y))).collect();
                let (t, y): (Vec<f64>, Vec<f64>) = values.into_iter().unzip();
                let Some(whole) = integrated_initial_rate_with(&t, &y, *s0, trace.rate.unwrap(), trace.intercept.unwrap(), 10.0) else {
                    missing += 1;
                    continue;
                };
                let entry = &mut by_s[c];
                entry.0.push(v / v0 - 1.0);
                entry.1 += usize::from(low <= *v0 && *v0 <= high);
                entry.2.push((whole.rate / v0 - 1.0).powi(2));
                entry.3.push(trace.rate.unwrap() / v0 - 1.0);
                entry.4 += usize::from(trace.rate_ci_low.unwrap() <= *v0 && *v0 <= trace.rate_ci_high.unwrap());
            }
        }
        assert!(missing * 100 <= plates * 12, "noise {noise}: {missing} traces without v0");
        for (c, (errors, covered, bench, window, window_covered)) in by_s.iter().enumerate() {
            let n = errors.len() as f64;
            let bias = errors.iter().sum::<f64>() / n;
            let mse = errors.iter().map(|e| e * e).sum::<f64>() / n;
            let bias_se = ((mse - bias * bias) / n).sqrt();
            let coverage = *covered as f64 / n;
            let coverage_se = (0.95f64 * 0.05 / n).sqrt();
            let bench_mse = bench.iter().sum::<f64>() / n;
            let window_bias = window.iter().sum::<f64>() / n;
            let line = format!(
                "noise {noise}, [S]0 {}: v0 bias {:+.2}% (MC SE {:.2}%), coverage {:.1}% of {n}, MSE ratio to whole-trace fit {:.2}; window bias {:+.2}%, coverage {:.1}%",
                concentrations[c],
                100.0 * bias,
                100.0 * bias_se,
                100.0 * coverage,
                mse / bench_mse,
                100.0 * window_bias,
                100.0 * *window_covered as f64 / n
            );
            println!("{line}");
            if bias.abs() > 0.01 + 2.0 * bias_se || coverage < 0.93 - 2.0 * coverage_se || coverage > 0.97 + 2.0 * coverage_se || mse > 1.5 * bench_mse {
                failures.push(line);
            }
        }
    }
    assert!(failures.is_empty(), "outside the goals:\n{}", failures.join("\n"));
}
