//! The tiny model in docs/model-format.md: its hex dump is what the encoder writes, and it
//! decodes to the fields the spec documents (values worked out in the spec's text).

#[path = "../examples/tiny_model.rs"]
#[allow(dead_code)]
mod tiny;

use regimix_format::transform::Transform;
use regimix_format::{ModelView, Source};

fn dump_from_spec() -> Vec<u8> {
    let spec = include_str!("../../docs/model-format.md");
    let start = spec
        .find("<!-- tiny-model-dump:begin -->")
        .expect("dump begin marker");
    let end = spec
        .find("<!-- tiny-model-dump:end -->")
        .expect("dump end marker");
    spec[start..end]
        .lines()
        .filter(|l| {
            l.len() > 6 && l.as_bytes()[4] == b' ' && l[..4].chars().all(|c| c.is_ascii_hexdigit())
        })
        .flat_map(|l| {
            l[6..]
                .split_whitespace()
                .map(|h| u8::from_str_radix(h, 16).expect("hex byte"))
                .collect::<Vec<_>>()
        })
        .collect()
}

#[test]
fn spec_dump_equals_encoder_output_and_committed_file() {
    let dump = dump_from_spec();
    assert_eq!(dump.len(), 268);
    let encoded = tiny::tiny_model().to_bytes().expect("encode");
    assert_eq!(
        dump, encoded,
        "docs/model-format.md dump is stale: rerun the tiny_model example"
    );
    assert_eq!(
        dump,
        include_bytes!("../../docs/examples/tiny-model.rgmx").to_vec()
    );
}

#[test]
fn spec_dump_decodes_to_the_documented_fields() {
    let dump = dump_from_spec();
    let m = ModelView::parse(&dump).expect("valid");
    assert_eq!(
        (
            m.n_inputs(),
            m.n_regimes(),
            m.n_regressors(),
            m.n_antecedent()
        ),
        (1, 2, 1, 1)
    );
    assert_eq!((m.hold_limit(), m.lab_window()), (2, 4));
    assert_eq!(m.transform(), Transform::Identity);
    assert!(!m.uses_output_lags());
    assert_eq!(m.sample_time(), 60.0);
    assert_eq!(
        (m.builder_version(), m.target_tag(), m.target_unit()),
        ("0.1.0", "X", "%")
    );
    assert_eq!((m.input_tag(0), m.input_unit(0)), ("TI-1", "degC"));
    let input = m.input(0).expect("input");
    assert_eq!(
        (input.low, input.high, input.mean, input.std),
        (0.0, 200.0, 100.0, 10.0)
    );
    let r = m.regressor(0).expect("regressor");
    assert_eq!((r.source, r.lag), (Source::Input(0), 0));
    assert_eq!((m.center(0, 0), m.center(1, 0)), (-1.0, 1.0));
    assert_eq!((m.factor(0, 0, 0), m.eta(1)), (1.0, 1.0));
    assert_eq!((m.offset(0), m.coefficient(0, 0)), (1.0, 0.5));
    assert_eq!((m.offset(1), m.coefficient(1, 0)), (-2.0, 0.25));
    let t = m.target();
    assert_eq!(
        (t.low, t.high, t.fuzziness, t.domain_threshold),
        (-1000.0, 1000.0, 2.0, 0.05)
    );
    assert_eq!(
        (t.residual_sd, t.bias_gain, t.bias_limit, t.outlier_k),
        (1.0, 0.5, 10.0, 3.0)
    );
}

#[test]
fn every_single_bit_flip_is_rejected() {
    let bytes = tiny::tiny_model().to_bytes().expect("encode");
    for i in 0..bytes.len() * 8 {
        let mut flipped = bytes.clone();
        flipped[i / 8] ^= 1 << (i % 8);
        assert!(ModelView::parse(&flipped).is_err(), "bit {i} flip accepted");
    }
    for len in 0..bytes.len() {
        assert!(
            ModelView::parse(&bytes[..len]).is_err(),
            "truncation to {len} accepted"
        );
    }
}

#[test]
fn spec_round_trips_through_the_view() {
    let spec = tiny::tiny_model();
    let bytes = spec.to_bytes().expect("encode");
    let back =
        regimix_format::encode::ModelSpec::from_view(&ModelView::parse(&bytes).expect("valid"));
    assert_eq!(back, spec);
}

/// `parse_trusted` (the C interface's re-open on every call) skips the CRC and the UTF-8 check
/// but keeps the layout checks: a corrupted tag byte reads as an empty tag, while a corrupted
/// count is still rejected. `parse` rejects both.
#[test]
fn trusted_parse_skips_text_checks_but_not_layout_checks() {
    let bytes = tiny::tiny_model().to_bytes().expect("encode");
    let view = ModelView::parse(&bytes).expect("valid");
    let tag_at = bytes
        .windows(4)
        .position(|w| w == b"TI-1")
        .expect("input tag in the file");
    let mut text = bytes.clone();
    text[tag_at] = 0xFF; // not UTF-8
    assert!(ModelView::parse(&text).is_err());
    let trusted = ModelView::parse_trusted(&text).expect("layout intact");
    assert_eq!(trusted.input_tag(0), "");
    assert_eq!(trusted.n_regimes(), view.n_regimes());
    let mut count = bytes.clone();
    count[14] = 17; // regimes above MAX_REGIMES
    assert!(ModelView::parse(&count).is_err());
    assert!(ModelView::parse_trusted(&count).is_err());
}
