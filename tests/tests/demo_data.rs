//! The committed demo data is exactly what the generator makes, and it passes `check` with the
//! defects it was built to show.

use regimix_builder::config::Config;
use regimix_builder::prepare::prepare;
use regimix_tests::workspace_root;

#[test]
fn regenerating_gives_identical_files() {
    let root = workspace_root().join("demo-data");
    for (name, text) in regimix_demo_plant::generate() {
        let committed = std::fs::read_to_string(root.join(&name)).expect("committed demo file");
        assert!(committed == text, "{name} differs from the generator's output: run `cargo run --release -p regimix-demo-plant -- demo-data`");
    }
}

#[test]
fn demo_audit_finds_the_planted_defects() {
    let root = workspace_root().join("demo-data");
    let prepared =
        prepare(&Config::load(&root.join("c301.yaml")).expect("config")).expect("prepare");
    let audit = &prepared.audit;
    let tag = |name: &str| audit.tags.iter().find(|t| t.tag == name).expect("tag");
    assert_eq!(
        audit.duplicate_rows, 30,
        "the two exports overlap by 30 minutes"
    );
    assert_eq!(tag("TI-3112").markers.get("I/O Timeout"), Some(&20));
    assert_eq!(tag("FI-3002").markers.get("Bad"), Some(&12));
    // 20 daily 20-minute calibrations, less the one that fell inside the 3-hour outage on day 9.
    assert_eq!(tag("AI-3010").markers.get("Calibrating"), Some(&(19 * 20)));
    let frozen = &tag("TI-3108").frozen;
    assert_eq!(frozen.len(), 1);
    assert_eq!(
        (frozen[0].start.as_str(), frozen[0].samples),
        ("2026-03-15T06:40:00Z", 300)
    );
    let gap = audit.widest_gap.as_ref().expect("outage");
    assert_eq!(gap.duration, "181min", "3-hour outage: 180 missing rows");
    // Six ±9 °C spikes were planted on TI-3104. Five sit in quiet operation (robust σ of their
    // window 0.09–0.34 °C) and are caught; the sixth (2026-03-10 16:36) sits in a 10 °C transient
    // whose window has a robust σ of 9.8 °C, where a 9 °C excursion is not an outlier.
    assert_eq!(tag("TI-3104").spikes, 5);
    assert!(audit.target.usable_samples > 25_000);

    let lab =
        prepare(&Config::load(&root.join("c301-lab.yaml")).expect("config")).expect("prepare");
    let placement = lab.audit.target.lab.expect("lab placement");
    assert_eq!(
        lab.audit
            .tags
            .last()
            .expect("target")
            .markers
            .get("Not analyzed"),
        Some(&1)
    );
    assert_eq!(
        placement.placed + 1,
        lab.audit.tags.last().expect("target").rows
    );
}
