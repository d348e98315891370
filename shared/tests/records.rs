//! The runtime's record accessors (whole sections cut into records) read the same bytes as the
//! per-field accessors, on a model with several inputs, a reordered antecedent and two regimes.

use regimix_format::encode::{InputSpec, ModelSpec, RegimeSpec};
use regimix_format::transform::Transform;
use regimix_format::{InputSettings, ModelView, Regressor, Source, TargetSettings};

fn model() -> Vec<u8> {
    let (n, p, r) = (3usize, 2usize, 4usize);
    ModelSpec {
        builder_version: "test".into(),
        target_tag: "Y".into(),
        target_unit: "%".into(),
        sample_time: 30.0,
        transform: Transform::Identity,
        target: TargetSettings {
            full_scale: 1.0,
            low: -10.0,
            high: 10.0,
            fuzziness: 2.0,
            domain_threshold: 0.05,
            residual_sd: 1.0,
            bias_gain: 0.5,
            bias_limit: 1.0,
            outlier_k: 3.0,
        },
        hold_limit: 3,
        lab_window: 10,
        inputs: (0..n)
            .map(|j| InputSpec {
                tag: format!("T{j}"),
                unit: "degC".into(),
                settings: InputSettings {
                    low: -1.0 - j as f64,
                    high: 100.0 + j as f64,
                    mean: 50.0 + j as f64,
                    std: 5.0 + j as f64,
                },
            })
            .collect(),
        regressors: vec![
            Regressor {
                source: Source::Input(2),
                lag: 3,
            },
            Regressor {
                source: Source::Input(0),
                lag: 0,
            },
            Regressor {
                source: Source::Output,
                lag: 1,
            },
            Regressor {
                source: Source::Input(1),
                lag: 7,
            },
        ],
        antecedent: vec![2, 0],
        regimes: (0..2)
            .map(|i| RegimeSpec {
                center: (0..p).map(|a| 0.5 * (i + a) as f64 - 0.25).collect(),
                factor: vec![1.0 + i as f64, 0.125, 2.0],
                eta: 1.5 + i as f64,
                offset: -0.5 * i as f64,
                coefficients: (0..r).map(|k| 0.1 * (k + 4 * i) as f64 + 0.05).collect(),
            })
            .collect(),
    }
    .to_bytes()
    .expect("encode")
}

fn word(bytes: &[u8], k: usize) -> f64 {
    let b: [u8; 8] = bytes[8 * k..8 * k + 8].try_into().expect("8 bytes");
    f64::from_le_bytes(b)
}

#[test]
fn record_accessors_agree_with_field_accessors() {
    let bytes = model();
    let m = ModelView::parse(&bytes).expect("valid");

    assert_eq!(m.input_records().len(), 3);
    for (j, record) in m.input_records().enumerate() {
        let s = m.input(j).expect("input");
        let fields: Vec<f64> = (0..4).map(|k| word(record, k)).collect();
        assert_eq!(fields, vec![s.low, s.high, s.mean, s.std]);
        assert_eq!(m.input_record(j), record);
    }
    assert!(m.input_record(3).is_empty());
    // The unsplit section is the three records back to back.
    assert_eq!(m.input_section().len(), 3 * 32);
    assert_eq!(&m.input_section()[32..64], m.input_record(1));

    let t = m.target();
    let target: Vec<f64> = (0..9).map(|k| word(m.target_record(), k)).collect();
    assert_eq!(
        target,
        vec![
            t.full_scale,
            t.low,
            t.high,
            t.fuzziness,
            t.domain_threshold,
            t.residual_sd,
            t.bias_gain,
            t.bias_limit,
            t.outlier_k
        ]
    );

    let antecedent: Vec<usize> = m
        .antecedent_records()
        .map(|rec| usize::from(u16::from_le_bytes([rec[0], rec[1]])))
        .collect();
    assert_eq!(
        antecedent,
        vec![m.antecedent_input(0), m.antecedent_input(1)]
    );
    assert_eq!(antecedent, vec![2, 0]);

    assert_eq!(m.regressor_records().len(), 4);
    for (k, rec) in m.regressor_records().enumerate() {
        let g = m.regressor(k).expect("regressor");
        let source = match (rec[0], rec[1]) {
            (0, j) => Source::Input(j),
            _ => Source::Output,
        };
        assert_eq!(
            (source, u16::from_le_bytes([rec[2], rec[3]])),
            (g.source, g.lag)
        );
    }

    let p = m.n_antecedent();
    assert_eq!(m.regime_records().len(), 2);
    for (i, rec) in m.regime_records().enumerate() {
        assert_eq!(rec.len(), 8 * (2 + 3 + 2 + 4));
        for a in 0..p {
            assert_eq!(word(rec, a), m.center(i, a));
        }
        let mut at = p;
        for row in 0..p {
            for col in 0..=row {
                assert_eq!(word(rec, at), m.factor(i, row, col));
                at += 1;
            }
        }
        assert_eq!((word(rec, at), word(rec, at + 1)), (m.eta(i), m.offset(i)));
        for k in 0..4 {
            assert_eq!(word(rec, at + 2 + k), m.coefficient(i, k));
        }
    }
}
