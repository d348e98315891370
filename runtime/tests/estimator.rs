//! The estimator on the tiny model of docs/model-format.md, with values computed by hand there
//! and below, plus property tests: no input and no byte string can make it panic or return a
//! non-finite estimate without a flag.

#[path = "../../shared/examples/tiny_model.rs"]
#[allow(dead_code)]
mod tiny;

use proptest::prelude::*;
use regimix_runtime::{
    state_words, state_words_for, Estimator, InitError, LabOutcome, ModelView, Real, Status,
};

fn bytes() -> Vec<u8> {
    tiny::tiny_model().to_bytes().expect("encode")
}

#[test]
fn memberships_and_blend_match_the_hand_computation() {
    let b = bytes();
    let model = ModelView::parse(&b).expect("valid");
    let mut state = vec![0.0f64; state_words(&model)];
    let mut e = Estimator::new(model, &mut state).expect("state");
    let est = e.step(&[95.0]);
    // x_s = (95 − 100)/10 = −0.5; d² = 0.25, 2.25; β = 4/(4 + 1/2.25) = 0.9, 0.1.
    assert!((e.weights()[0] - 0.9).abs() < 1e-15 && (e.weights()[1] - 0.1).abs() < 1e-15);
    // ŷ = 0.9 · (1 + 0.5·95) + 0.1 · (−2 + 0.25·95) = 45.825; typicality max(1/1.25, 1/3.25) = 0.8.
    assert!((est.value - 45.825).abs() < 1e-12, "{}", est.value);
    assert!((est.typicality - 0.8).abs() < 1e-15);
    assert_eq!(est.dominant, 0);
    assert!(est.status.is_good(), "{:?}", est.status);
    // At the second center (110 °C): β = (0, 1) up to the 1e-30 floor, y = −2 + 27.5.
    let est = e.step(&[110.0]);
    assert!((est.value - 25.5).abs() < 1e-9);
    assert_eq!(est.dominant, 1);
    assert_eq!(est.typicality, 1.0);
}

#[test]
fn memberships_for_fuzziness_other_than_two_follow_the_fcm_formula() {
    // The tiny model with m = 1.5: u_i = (d²_min / d²_i)^(1/(m−1)) = (d²_min / d²_i)², the
    // fuzzy c-means membership (Bezdek 1981), and τ_i = 1 / (1 + (d²_i / η_i)²).
    let mut spec = tiny::tiny_model();
    spec.target.fuzziness = 1.5;
    let b = spec.to_bytes().expect("encode");
    let model = ModelView::parse(&b).expect("valid");
    let mut state = vec![0.0f64; state_words(&model)];
    let mut e = Estimator::new(model, &mut state).expect("state");
    let est = e.step(&[95.0]);
    // d² = 0.25, 2.25 → u = 1, 1/81 → β = 81/82, 1/82.
    let (b0, b1) = (81.0 / 82.0, 1.0 / 82.0);
    assert!((e.weights()[0] - b0).abs() < 1e-15 && (e.weights()[1] - b1).abs() < 1e-15);
    let y = b0 * (1.0 + 0.5 * 95.0) + b1 * (-2.0 + 0.25 * 95.0);
    assert!((est.value - y).abs() < 1e-12, "{} vs {y}", est.value);
    assert!((est.typicality - 1.0 / (1.0 + 0.0625)).abs() < 1e-15);
}

#[test]
fn lagged_inputs_and_outputs_are_read_correctly_after_the_rings_wrap() {
    use regimix_format::{Regressor, Source};
    // One regime, so the estimate is its consequent:
    // y[t] = 0.5 + 0.25·u0[t] − 0.5·u0[t−3] + 2·u1[t−1] + 0.3·y[t−2],
    // with the output history started at the steady state of the first sample's inputs.
    let mut spec = tiny::tiny_model();
    spec.inputs.push(spec.inputs[0].clone());
    spec.regressors = vec![
        Regressor {
            source: Source::Input(0),
            lag: 0,
        },
        Regressor {
            source: Source::Input(0),
            lag: 3,
        },
        Regressor {
            source: Source::Input(1),
            lag: 1,
        },
        Regressor {
            source: Source::Output,
            lag: 2,
        },
    ];
    spec.regimes.truncate(1);
    spec.regimes[0].offset = 0.5;
    spec.regimes[0].coefficients = vec![0.25, -0.5, 2.0, 0.3];
    spec.target.domain_threshold = 0.0;
    let b = spec.to_bytes().expect("encode");
    let model = ModelView::parse(&b).expect("valid");
    let mut state = vec![0.0f64; state_words(&model)];
    let mut e = Estimator::new(model, &mut state).expect("state");

    let u0 = |t: usize| 100.0 + 7.0 * (t as f64 * 0.7).sin();
    let u1 = |t: usize| 90.0 + 5.0 * (t as f64 * 0.3).cos();
    let mut y: Vec<f64> = Vec::new();
    let start = (0.5 + (0.25 - 0.5) * u0(0) + 2.0 * u1(0)) / (1.0 - 0.3);
    for t in 0..40usize {
        // Before any history, lagged inputs read the first sample (the rings start filled).
        let past = |f: &dyn Fn(usize) -> f64, lag: usize| f(t.saturating_sub(lag));
        let y2 = if t >= 2 { y[t - 2] } else { start };
        let expected = 0.5 + 0.25 * u0(t) - 0.5 * past(&u0, 3) + 2.0 * past(&u1, 1) + 0.3 * y2;
        let est = e.step(&[u0(t), u1(t)]);
        assert!(
            (est.value - expected).abs() < 1e-9,
            "t = {t}: {} vs {expected}",
            est.value
        );
        assert_eq!(est.status.has(Status::WARMING_UP), t < 3, "t = {t}");
        y.push(est.value);
    }
}

#[test]
fn invalid_inputs_are_held_then_fall_back() {
    let b = bytes();
    let model = ModelView::parse(&b).expect("valid");
    let mut state = vec![0.0f64; state_words(&model)];
    let mut e = Estimator::new(model, &mut state).expect("state");
    let good = e.step(&[95.0]);
    // Hold limit 2: two substituted samples, then invalid and fallback (holding the last value).
    for bad in [f64::NAN, 250.0] {
        let est = e.step(&[bad]);
        assert!(
            est.status.has(Status::INPUT_SUBSTITUTED),
            "{:?}",
            est.status
        );
        assert_eq!(est.value, good.value);
    }
    let est = e.step(&[f64::INFINITY]);
    assert!(est.status.has(Status::INPUT_INVALID) && est.status.has(Status::FALLBACK));
    assert_eq!(est.value, good.value);
    assert!(est.model_value.is_nan());
    let est = e.step(&[95.0]);
    assert!(est.status.is_good());
    let est = e.step(&[95.0, 1.0]);
    assert!(est.status.has(Status::WRONG_INPUT_COUNT) && est.status.has(Status::FALLBACK));
}

#[test]
fn far_inputs_are_out_of_domain() {
    let b = bytes();
    let model = ModelView::parse(&b).expect("valid");
    let mut state = vec![0.0f64; state_words(&model)];
    let mut e = Estimator::new(model, &mut state).expect("state");
    // 190 °C: x_s = 9, nearest center at 1, d² = 64 → typicality 1/65 ≈ 0.015 < 0.05.
    let est = e.step(&[190.0]);
    assert!(est.status.has(Status::OUT_OF_DOMAIN));
    assert!((est.typicality - 1.0 / 65.0).abs() < 1e-12);
}

#[test]
fn lab_feedback_updates_the_bias_with_the_estimate_at_sample_time() {
    let b = bytes();
    let model = ModelView::parse(&b).expect("valid");
    let mut state = vec![0.0f64; state_words(&model)];
    let mut e = Estimator::new(model, &mut state).expect("state");
    e.step(&[95.0]); // ŷ = 45.825, two samples before the result
    e.step(&[110.0]); // ŷ = 25.5
    e.step(&[110.0]);
    // Lab says 47.825 for the material sampled 2 samples ago: residual 2, gain 0.5 → bias 1.
    match e.lab_result(47.825, 2) {
        LabOutcome::Applied(bias) => assert!((bias - 1.0).abs() < 1e-12, "{bias}"),
        other => panic!("expected the update to apply, got {other:?}"),
    }
    let est = e.step(&[110.0]);
    assert!(
        (est.value - 26.5).abs() < 1e-9,
        "bias applied: {}",
        est.value
    );
    // Residual 10 from a bias of 1 exceeds 3 residual SDs: rejected, bias unchanged.
    assert_eq!(e.lab_result(35.5, 0), LabOutcome::RejectedOutlier);
    assert_eq!(e.lab_result(30.0, 5), LabOutcome::RejectedAge);
    assert!((e.bias() - 1.0).abs() < 1e-9);
    // A sample with a substituted input is not trusted for the bias update.
    e.step(&[f64::NAN]);
    assert_eq!(e.lab_result(25.5, 0), LabOutcome::RejectedStatus);
}

#[test]
fn f32_path_agrees_with_f64() {
    let b = bytes();
    let model = ModelView::parse(&b).expect("valid");
    let mut s64 = vec![0.0f64; state_words(&model)];
    let mut s32 = vec![0.0f32; state_words_for::<f32>(&model)];
    let mut e64 = Estimator::new(model, &mut s64).expect("state");
    let mut e32 = Estimator::new(model, &mut s32).expect("state");
    for k in 0..2000 {
        let x = 100.0 + 15.0 * (k as f64 * 0.01).sin();
        let a = e64.step(&[x]);
        let b = e32.step(&[x as f32]);
        assert_eq!(a.status, b.status);
        assert!(
            (a.value - f64::from(b.value)).abs() <= 1e-5 * a.value.abs().max(1.0),
            "{k}: {} vs {}",
            a.value,
            b.value
        );
    }
}

#[test]
fn too_small_state_is_an_error() {
    let b = bytes();
    let model = ModelView::parse(&b).expect("valid");
    let mut state = vec![0.0f64; state_words(&model) - 1];
    assert!(Estimator::new(model, &mut state).is_err());
    // An f32 estimator also keeps its parameters, converted once, in the state: the f64 count
    // is too small for it, and the error says what it needs.
    let needed = state_words_for::<f32>(&model);
    assert_eq!(state_words_for::<f64>(&model), state_words(&model));
    assert!(needed > state_words(&model));
    let mut s32 = vec![0.0f32; state_words(&model)];
    match Estimator::new(model, &mut s32) {
        Err(InitError::StateTooSmall { needed: n, given }) => {
            assert_eq!((n, given), (needed, state_words(&model)));
        }
        other => panic!("{other:?}"),
    }
    let mut s32 = vec![0.0f32; needed];
    assert!(Estimator::new(model, &mut s32).is_ok());
}

/// Steps the tiny model through `xs`, then feeds back `lab`: every estimate finite or flagged as
/// a fallback, every typicality and the bias finite.
fn finite_or_flagged<T: Real>(xs: &[T], lab: &[(T, u16)]) -> Result<(), TestCaseError> {
    let b = bytes();
    let model = ModelView::parse(&b).expect("valid");
    let mut state = vec![T::ZERO; state_words_for::<T>(&model)];
    let mut e = Estimator::new(model, &mut state).expect("state");
    for &x in xs {
        let est = e.step(&[x]);
        prop_assert!(est.value.is_finite() || est.status.has(Status::FALLBACK));
        prop_assert!(est.typicality.is_finite());
    }
    for &(v, age) in lab {
        let _ = e.lab_result(v, age);
        prop_assert!(e.bias().is_finite());
    }
    Ok(())
}

proptest! {
    #[test]
    fn decoding_arbitrary_bytes_never_panics(data in proptest::collection::vec(any::<u8>(), 0..600)) {
        let _ = ModelView::parse(&data);
        let _ = ModelView::parse_trusted(&data);
    }

    #[test]
    fn mutated_model_bytes_never_panic(pos in 0usize..268, value in any::<u8>()) {
        let mut b = bytes();
        b[pos] = value;
        let _ = ModelView::parse(&b);
        if let Ok(view) = ModelView::parse_trusted(&b) {
            let mut state = vec![0.0f64; state_words(&view)];
            if let Ok(mut e) = Estimator::new(view, &mut state) {
                let est = e.step(&[95.0]);
                prop_assert!(est.value.is_finite() || !est.status.is_good());
            }
        }
    }

    #[test]
    fn any_inputs_give_a_finite_estimate_or_a_flag(
        xs in proptest::collection::vec(prop_oneof![
            any::<f64>(),
            Just(f64::NAN), Just(f64::INFINITY), Just(f64::NEG_INFINITY),
            Just(f64::MIN_POSITIVE / 2.0), Just(1e308), Just(-0.0),
            0.0f64..200.0,
        ], 1..40),
        lab in proptest::collection::vec((any::<f64>(), any::<u16>()), 0..5),
    ) {
        finite_or_flagged::<f64>(&xs, &lab)?;
    }

    /// The same in f32, whose parameters are a converted copy and whose inverse transform and
    /// clipping run in single precision.
    #[test]
    fn any_f32_inputs_give_a_finite_estimate_or_a_flag(
        xs in proptest::collection::vec(prop_oneof![
            any::<f32>(),
            Just(f32::NAN), Just(f32::INFINITY), Just(f32::NEG_INFINITY),
            Just(f32::MIN_POSITIVE / 2.0), Just(3e38f32), Just(-0.0f32),
            0.0f32..200.0,
        ], 1..40),
        lab in proptest::collection::vec((any::<f32>(), any::<u16>()), 0..5),
    ) {
        finite_or_flagged::<f32>(&xs, &lab)?;
    }
}
