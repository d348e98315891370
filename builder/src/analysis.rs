//! Local dynamics of each regime, read from a model file: operating point, steady-state gains,
//! dead times, time constants and stability, in engineering units.
//!
//! Each regime's consequent is a linear model `y(k) = θ₀ + Σ a_i y(k−i) + Σ b_{j,l} u_j(k−l)` in
//! the model domain. Around the regime's operating point (antecedent inputs at the regime
//! center, other inputs at their training mean):
//! - steady-state gain `K_j = Σ_l b_{j,l} / (1 − Σ a_i)`, converted to engineering units through
//!   the slope of the inverse target transform at the operating point;
//! - dead time and time constant from the simulated unit-step response: the dead time is the
//!   first time the response passes 2 % of its final value, the time constant the time from
//!   there to 63.2 % (for a first-order-plus-dead-time process this gives θ and τ exactly);
//! - the response's shape: how far it overshoots its final value, and how far it first moves the
//!   other way (an inverse response). A time constant read off a response that overshoots or
//!   turns back says little; the slowest pole's time constant is given beside it;
//! - poles: roots of `z^na − a₁ z^(na−1) − … − a_na`; stable when all lie inside the unit circle.

use nalgebra::DMatrix;
use regimix_format::{ModelView, Source};

/// Dynamics of one regime with respect to one input.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct InputResponse {
    /// Input tag.
    pub tag: String,
    /// Steady-state gain in target units per input unit.
    pub gain: f64,
    /// Steady-state gain in the model domain (before the target transform's slope).
    pub model_gain: f64,
    /// Dead time, seconds (None when the input has no effect).
    pub dead_time: Option<f64>,
    /// Time constant, seconds (None when the input has no effect).
    pub time_constant: Option<f64>,
    /// How far the unit-step response rises above its final value, as a fraction of it (0 when
    /// it never does; NaN when the input has no effect).
    pub overshoot: f64,
    /// How far the unit-step response first moves against its final value, as a fraction of
    /// it: an inverse response (0 when it never does; NaN when the input has no effect).
    pub undershoot: f64,
}

/// One regime's local model in readable form.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct RegimeDynamics {
    /// Regime index.
    pub regime: usize,
    /// Operating point: (tag, value in units) for every input.
    pub operating_point: Vec<(String, f64)>,
    /// Target at the operating point, engineering units.
    pub target: f64,
    /// Per input.
    pub inputs: Vec<InputResponse>,
    /// Magnitudes of the output-lag poles (empty for a static or FIR model).
    pub pole_magnitudes: Vec<f64>,
    /// `−Ts / ln |p|` of the pole of largest magnitude, the slowest-decaying mode (for a
    /// complex pair, the decay of its envelope), seconds; None for a static or FIR model and
    /// for an unstable one.
    pub pole_time_constant: Option<f64>,
    /// All poles inside the unit circle.
    pub stable: bool,
}

/// Step-response horizon in samples.
const HORIZON: usize = 20_000;

/// Roots (re, im) of `z^na − a₁ z^(na−1) − … − a_na` for `a` = [a₁ … a_na] (NaN if the
/// eigenvalue iteration does not converge).
///
/// Past outputs one analyzer cycle apart make a polynomial in `w = z^g`, `g` the greatest common
/// divisor of the lags in use: its roots are found for `w` from a companion matrix `g` times
/// smaller and spread over the `g`-th roots. The QR iteration does not converge on the sparse
/// companion matrix of, say, `z^10 − a` (a cyclic shift; the unbounded iteration hung `build`
/// and `inspect`), and is capped in any case.
fn poles(a: &[f64]) -> Vec<(f64, f64)> {
    let na = a.len();
    let used: Vec<usize> = (1..=na).filter(|&lag| a[lag - 1] != 0.0).collect();
    let Some(&longest) = used.last() else {
        return vec![(0.0, 0.0); na];
    };
    let g = used.iter().fold(0, |d, &lag| gcd(d, lag));
    let order = longest / g;
    // Companion matrix of w^order − a_g w^(order−1) − a_2g w^(order−2) − …
    let mut m = DMatrix::<f64>::zeros(order, order);
    for i in 0..order {
        m[(0, i)] = a[(i + 1) * g - 1];
    }
    for i in 1..order {
        m[(i, i - 1)] = 1.0;
    }
    let mut out = Vec::with_capacity(na);
    match m.try_schur(1e-14, 10_000) {
        Some(schur) => {
            for w in schur.complex_eigenvalues().iter() {
                let radius = w.norm().powf(1.0 / g as f64);
                let angle = w.arg() / g as f64;
                for k in 0..g {
                    let phi = angle + std::f64::consts::TAU * k as f64 / g as f64;
                    out.push((radius * phi.cos(), radius * phi.sin()));
                }
            }
        }
        None => out.resize(longest, (f64::NAN, f64::NAN)),
    }
    // Lags beyond the longest in use put their roots at zero.
    out.resize(na, (0.0, 0.0));
    out
}

fn gcd(a: usize, b: usize) -> usize {
    if b == 0 {
        a
    } else {
        gcd(b, a % b)
    }
}

/// Unit-step response (model domain) of one input in a regime: `lags` with coefficients `b`,
/// output lags `a` (index i ↦ lag i+1). Returns (dead time, time constant) in samples.
pub fn step_timing(b: &[(usize, f64)], a: &[f64]) -> Option<(f64, f64)> {
    let total: f64 = b.iter().map(|(_, c)| c).sum();
    let feedback: f64 = a.iter().sum();
    if total == 0.0 || (1.0 - feedback).abs() < 1e-12 {
        return None;
    }
    let fin = total / (1.0 - feedback);
    let mut y: Vec<f64> = Vec::with_capacity(HORIZON);
    let (mut dead, mut t63) = (None, None);
    for k in 0..HORIZON {
        let mut v = 0.0;
        for &(lag, c) in b {
            if k >= lag {
                v += c;
            }
        }
        for (i, ai) in a.iter().enumerate() {
            if k > i {
                v += ai * y[k - i - 1];
            }
        }
        y.push(v);
        let frac = v / fin;
        let prev_frac = if k > 0 { y[k - 1] / fin } else { 0.0 };
        if dead.is_none() && prev_frac <= 0.02 && frac >= 0.632_120_558_8 {
            // The whole rise happens within one sample (a pure delay): dead time k, no lag.
            return Some((k as f64, 0.0));
        }
        if dead.is_none() && frac > 0.02 {
            // Interpolate the crossing between k−1 and k.
            let prev = if k > 0 { y[k - 1] / fin } else { 0.0 };
            dead = Some(k as f64 - 1.0 + (0.02 - prev) / (frac - prev));
        }
        if frac >= 0.632_120_558_8 {
            let prev = if k > 0 { y[k - 1] / fin } else { 0.0 };
            t63 = Some(k as f64 - 1.0 + (0.632_120_558_8 - prev) / (frac - prev));
            break;
        }
    }
    let dead = dead?.max(0.0);
    Some((dead, (t63? - dead).max(0.0)))
}

/// (overshoot, undershoot) of the unit-step response of `y(k) = Σ a_i y(k−i) + Σ c u(k−lag)`,
/// as fractions of its final value (NaN for no response or no steady state). The response is
/// followed until it has stayed within 10⁻⁶ of the final value for as long as the longest lag,
/// or for [`HORIZON`] samples.
pub fn step_extremes(b: &[(usize, f64)], a: &[f64]) -> (f64, f64) {
    let total: f64 = b.iter().map(|(_, c)| c).sum();
    let feedback: f64 = a.iter().sum();
    if total == 0.0 || (1.0 - feedback).abs() < 1e-12 {
        return (f64::NAN, f64::NAN);
    }
    let fin = total / (1.0 - feedback);
    let memory = b
        .iter()
        .map(|(lag, _)| *lag)
        .max()
        .unwrap_or(0)
        .max(a.len())
        + 1;
    let (mut high, mut low) = (0.0_f64, 0.0_f64);
    let mut y: Vec<f64> = Vec::with_capacity(HORIZON);
    let mut settled = 0;
    for k in 0..HORIZON {
        let mut v: f64 = b.iter().filter(|(lag, _)| k >= *lag).map(|(_, c)| c).sum();
        for (i, ai) in a.iter().enumerate() {
            if k > i {
                v += ai * y[k - i - 1];
            }
        }
        y.push(v);
        let frac = v / fin;
        high = high.max(frac - 1.0);
        low = low.max(-frac);
        settled = if (frac - 1.0).abs() < 1e-6 {
            settled + 1
        } else {
            0
        };
        if settled > memory {
            break;
        }
    }
    (high, low)
}

/// `−Ts / ln |p|` of the largest pole magnitude: the time constant of the slowest-decaying mode
/// (it decays as |p|^k; for a complex pair, the envelope of its swing). None without poles and
/// when a pole lies on or outside the unit circle.
fn slowest_time_constant(magnitudes: &[f64], ts: f64) -> Option<f64> {
    if magnitudes.iter().any(|m| !(*m < 1.0)) {
        return None;
    }
    let largest = magnitudes.iter().copied().fold(0.0_f64, f64::max);
    (largest > 0.0).then(|| -ts / largest.ln())
}

/// Overshoot or undershoot below this share of the final value is not worth a word.
const SHAPE_NOTE: f64 = 0.05;

/// "inverse response 12 %", "overshoots 23 %", both, or nothing: what a reader of a dead time
/// and a time constant should know about the response they were read from.
pub fn shape_note(r: &InputResponse) -> Option<String> {
    let mut parts = Vec::new();
    if r.undershoot >= SHAPE_NOTE {
        parts.push(format!("inverse response {:.0} %", 100.0 * r.undershoot));
    }
    if r.overshoot >= SHAPE_NOTE {
        parts.push(format!("overshoots {:.0} %", 100.0 * r.overshoot));
    }
    (!parts.is_empty()).then(|| parts.join(", "))
}

/// The local dynamics of every regime of a model.
pub fn regime_dynamics(model: &ModelView<'_>) -> Vec<RegimeDynamics> {
    let n = model.n_inputs();
    let ts = model.sample_time();
    let transform = model.transform();
    (0..model.n_regimes())
        .map(|i| {
            let mut point: Vec<f64> = (0..n)
                .map(|j| model.input(j).map_or(0.0, |s| s.mean))
                .collect();
            for a in 0..model.n_antecedent() {
                let j = model.antecedent_input(a);
                if let (Some(s), Some(slot)) = (model.input(j), point.get_mut(j)) {
                    *slot = model.center(i, a) * s.std + s.mean;
                }
            }
            let mut a_coef: Vec<f64> = vec![0.0; model.max_output_lag() as usize];
            let mut b_coef: Vec<Vec<(usize, f64)>> = vec![Vec::new(); n];
            let mut level = model.offset(i);
            for r in 0..model.n_regressors() {
                let Some(reg) = model.regressor(r) else {
                    continue;
                };
                let c = model.coefficient(i, r);
                match reg.source {
                    Source::Output => {
                        if let Some(slot) = a_coef.get_mut(reg.lag as usize - 1) {
                            *slot += c;
                        }
                    }
                    Source::Input(j) => {
                        let j = j as usize;
                        level += c * point.get(j).copied().unwrap_or(0.0);
                        if let Some(list) = b_coef.get_mut(j) {
                            list.push((reg.lag as usize, c));
                        }
                    }
                }
            }
            let feedback: f64 = a_coef.iter().sum();
            let z_ss = if (1.0 - feedback).abs() > 1e-12 {
                level / (1.0 - feedback)
            } else {
                level
            };
            let slope = transform.inverse_slope(z_ss);
            let inputs = (0..n)
                .map(|j| {
                    let total: f64 = b_coef[j].iter().map(|(_, c)| c).sum();
                    let model_gain = if (1.0 - feedback).abs() > 1e-12 {
                        total / (1.0 - feedback)
                    } else {
                        f64::NAN
                    };
                    let timing = step_timing(&b_coef[j], &a_coef);
                    let (overshoot, undershoot) = step_extremes(&b_coef[j], &a_coef);
                    InputResponse {
                        tag: model.input_tag(j).to_string(),
                        gain: model_gain * slope,
                        model_gain,
                        dead_time: timing.map(|(d, _)| d * ts),
                        time_constant: timing.map(|(_, t)| t * ts),
                        overshoot,
                        undershoot,
                    }
                })
                .collect();
            let roots = poles(&a_coef);
            let magnitudes: Vec<f64> = roots.iter().map(|(re, im)| re.hypot(*im)).collect();
            RegimeDynamics {
                regime: i,
                operating_point: (0..n)
                    .map(|j| (model.input_tag(j).to_string(), point[j]))
                    .collect(),
                target: transform.inverse(z_ss),
                inputs,
                stable: magnitudes.iter().all(|m| *m < 1.0),
                pole_time_constant: slowest_time_constant(&magnitudes, ts),
                pole_magnitudes: magnitudes,
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A complex pair r·e^{±jω} decays as r^k: its time constant is −Ts / ln r (the envelope of
    /// the sampled oscillation, from z = e^{sT}); the slowest of several modes counts.
    #[test]
    fn slowest_mode_time_constant() {
        let roots = poles(&[2.0 * 0.9 * 0.3_f64.cos(), -0.81]);
        let magnitudes: Vec<f64> = roots.iter().map(|(re, im)| re.hypot(*im)).collect();
        let tau = slowest_time_constant(&magnitudes, 60.0).expect("stable");
        assert!((tau - (-60.0 / 0.9_f64.ln())).abs() < 1e-6, "{tau}");
        assert_eq!(
            slowest_time_constant(&[0.5, 0.9, 0.2], 1.0),
            Some(-1.0 / 0.9_f64.ln())
        );
        assert_eq!(slowest_time_constant(&[0.5, 1.01], 1.0), None);
        assert_eq!(slowest_time_constant(&[], 1.0), None);
    }

    /// An underdamped second-order process ωn²/(s² + 2ζωn s + ωn²) overshoots by
    /// exp(−ζπ/√(1−ζ²)) (16.3 % at ζ = 0.5; Ogata, *Modern Control Engineering*, transient
    /// response specifications). Its ZOH discretization is step-invariant, so its sampled step
    /// response lies on the continuous one: the model below is built from the denominator's
    /// poles e^{(−σ ± jω_d)T} and the continuous response at T and 2T. A first-order response
    /// neither overshoots nor turns back; a two-tap FIR shows exactly its taps.
    #[test]
    fn overshoot_and_inverse_response() {
        let (zeta, wn, t) = (0.5_f64, 1.0_f64, 0.01_f64);
        let sigma = zeta * wn;
        let wd = wn * (1.0 - zeta * zeta).sqrt();
        let step = |time: f64| {
            1.0 - (-sigma * time).exp() * ((wd * time).cos() + sigma / wd * (wd * time).sin())
        };
        let a1 = 2.0 * (-sigma * t).exp() * (wd * t).cos();
        let a2 = -(-2.0 * sigma * t).exp();
        let b1 = step(t);
        let b2 = step(2.0 * t) - a1 * step(t) - b1;
        let (over, under) = step_extremes(&[(1, b1), (2, b2)], &[a1, a2]);
        let expected = (-zeta * std::f64::consts::PI / (1.0 - zeta * zeta).sqrt()).exp();
        assert!((over - expected).abs() < 1e-4, "{over} vs {expected}");
        assert_eq!(under, 0.0);

        let a = (-60.0_f64 / 300.0).exp();
        let (over, under) = step_extremes(&[(3, 2.0 * (1.0 - a))], &[a]);
        assert!(over < 1e-12 && under == 0.0, "{over} {under}");
        assert_eq!(step_extremes(&[(1, 1.5), (2, -0.5)], &[]), (0.5, 0.0));
        assert_eq!(step_extremes(&[(1, -0.5), (2, 1.5)], &[]), (0.0, 0.5));
        let (none, _) = step_extremes(&[], &[0.5]);
        assert!(none.is_nan());
    }

    /// First order plus dead time sampled with a zero-order hold (Seborg, Edgar & Mellichamp,
    /// Process Dynamics and Control, discrete-time models): y(k) = a y(k−1) + b u(k−1−N) with
    /// a = exp(−Ts/τ), b = K(1−a). With Ts = 60 s, τ = 300 s, N = 2 the response starts moving
    /// after (N+1) samples of input delay minus the ZOH's one sample, i.e. θ = N·Ts = 120 s …
    #[test]
    fn first_order_plus_dead_time_timing() {
        let tau: f64 = 300.0;
        let ts = 60.0;
        let a = (-ts / tau).exp();
        let b = 2.0 * (1.0 - a);
        // Input lag 3 = 1 (ZOH) + N = 2 samples of dead time.
        let (dead, t) = step_timing(&[(3, b)], &[a]).expect("responds");
        // … the sampled response first moves at sample 3 and then follows 1 − a^(k−2): the 2 %
        // point is inside the first step after the dead time and 63.2 % is reached one time
        // constant later. The discrete response sits on the continuous one at the samples, so
        // θ·Ts ∈ [120, 180] s and τ within one sample of 300 s.
        assert!((2.0..3.0).contains(&dead), "dead time {dead} samples");
        assert!((t * ts - tau).abs() <= ts, "time constant {} s", t * ts);
        // Gain: b / (1 − a) = K = 2 (textbook relation).
        assert!((b / (1.0 - a) - 2.0).abs() < 1e-12);
    }

    #[test]
    fn poles_of_a_second_order_model() {
        // y = 1.5 y(k−1) − 0.56 y(k−2): roots of z² − 1.5 z + 0.56 are 0.8 and 0.7.
        let mut p: Vec<f64> = poles(&[1.5, -0.56]).iter().map(|(re, _)| *re).collect();
        p.sort_by(f64::total_cmp);
        assert!((p[0] - 0.7).abs() < 1e-12 && (p[1] - 0.8).abs() < 1e-12);
    }

    /// Past outputs one cycle apart: y = 0.6561 y(k−4) has the four roots of z⁴ = 0.6561,
    /// ±0.9 and ±0.9i (the pole of y = 0.9 y(k−1), read every fourth sample), and a model with
    /// past outputs ten samples apart gets its twenty roots instead of hanging.
    #[test]
    fn poles_of_past_outputs_one_cycle_apart() {
        let mut a = vec![0.0; 4];
        a[3] = 0.6561;
        let mut roots = poles(&a);
        assert_eq!(roots.len(), 4);
        roots.sort_by(|x, y| x.0.total_cmp(&y.0).then(x.1.total_cmp(&y.1)));
        let expected = [(-0.9, 0.0), (0.0, -0.9), (0.0, 0.9), (0.9, 0.0)];
        for ((re, im), (er, ei)) in roots.iter().zip(expected) {
            assert!(
                (re - er).abs() < 1e-12 && (im - ei).abs() < 1e-12,
                "{roots:?}"
            );
        }
        let mut a = vec![0.0; 20];
        a[9] = 0.43;
        a[19] = 0.1;
        let roots = poles(&a);
        assert_eq!(roots.len(), 20);
        // w² − 0.43 w − 0.1 = 0: w = 0.6068…, −0.1648…; |z| = |w|^(1/10).
        let w = (0.43 + (0.43f64 * 0.43 + 0.4).sqrt()) / 2.0;
        let largest = roots.iter().map(|(r, i)| r.hypot(*i)).fold(0.0, f64::max);
        assert!((largest - w.powf(0.1)).abs() < 1e-12, "{largest}");
        // A trailing zero lag is a root at the origin.
        assert_eq!(poles(&[0.5, 0.0]), vec![(0.5, 0.0), (0.0, 0.0)]);
    }

    #[test]
    fn static_input_has_no_delay() {
        let (dead, t) = step_timing(&[(0, 1.0)], &[]).expect("responds");
        assert!(dead <= 0.0 + 1e-12 && t <= 1e-12);
        assert!(step_timing(&[], &[]).is_none());
    }

    #[test]
    fn a_pure_delay_has_that_dead_time_and_no_lag() {
        assert_eq!(step_timing(&[(4, 0.7)], &[]), Some((4.0, 0.0)));
    }
}
