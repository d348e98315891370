//! The runtime's record accessors (whole sections cut into records) read the same bytes as the
//! per-field accessors, on a model with several inputs, a reordered antecedent and three regimes
//! (one interleaved pair, then the odd regime paired with zero padding).

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
        regimes: (0..3)
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
    // Words of regime `i` in order, as the per-field accessors read them.
    let words = |i: usize| -> Vec<f64> {
        let mut w: Vec<f64> = (0..p).map(|a| m.center(i, a)).collect();
        for row in 0..p {
            for col in 0..=row {
                w.push(m.factor(i, row, col));
            }
        }
        w.extend([m.eta(i), m.offset(i)]);
        w.extend((0..4).map(|k| m.coefficient(i, k)));
        w
    };
    let len = 2 + 3 + 2 + 4;
    let pairs = m.regime_pairs();
    assert_eq!(pairs.len(), 2);
    assert!(pairs.remainder().is_empty());
    let padding = vec![0.0; len];
    for (j, block) in pairs.enumerate() {
        assert_eq!(block.len(), 16 * len);
        let a = words(2 * j);
        let b = if 2 * j + 1 < m.n_regimes() {
            words(2 * j + 1)
        } else {
            padding.clone()
        };
        for k in 0..len {
            assert_eq!((word(block, 2 * k), word(block, 2 * k + 1)), (a[k], b[k]));
        }
    }
    // The accessors read the values the model was built with.
    assert_eq!((m.center(2, 1), m.eta(2), m.offset(2)), (1.25, 3.5, -1.0));
    assert!((m.coefficient(1, 3) - 0.75).abs() < 1e-12);
}

#[test]
fn nonzero_padding_of_an_odd_regime_count_is_rejected() {
    use regimix_format::crc32::{crc32, fnv1a64};
    use regimix_format::DecodeError;
    let mut bytes = model();
    // The padding regime's last word (the last coefficient's second lane) ends just before
    // the 4-byte CRC; set it to 1.0 and re-seal the file (model id, then CRC).
    let n = bytes.len();
    bytes[n - 12..n - 4].copy_from_slice(&1.0f64.to_le_bytes());
    let id = fnv1a64(&bytes[48..n - 4]);
    bytes[32..40].copy_from_slice(&id.to_le_bytes());
    let crc = crc32(&bytes[..n - 4]);
    bytes[n - 4..].copy_from_slice(&crc.to_le_bytes());
    assert_eq!(
        ModelView::parse(&bytes).err(),
        Some(DecodeError::InvalidField)
    );
    // The same bytes with the padding restored decode.
    bytes[n - 12..n - 4].copy_from_slice(&0.0f64.to_le_bytes());
    let id = fnv1a64(&bytes[48..n - 4]);
    bytes[32..40].copy_from_slice(&id.to_le_bytes());
    let crc = crc32(&bytes[..n - 4]);
    bytes[n - 4..].copy_from_slice(&crc.to_le_bytes());
    assert!(ModelView::parse(&bytes).is_ok());
}
