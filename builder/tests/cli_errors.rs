//! Bad input to `regimix check`: one clear message naming file, line and column; exit code 2;
//! no panic text; nothing written.

mod common;

use common::{assert_clean_failure, listing, regimix, write};

const CONFIG: &str = "
data:
  files: [d.csv]
  timestamp: time
sample-time: 1min
target:
  tag: Y
  source: analyzer
inputs:
  - tag: X
";

fn run_with_data(data: &[u8]) -> (tempfile::TempDir, std::process::Output) {
    let dir = tempfile::tempdir().expect("tempdir");
    std::fs::write(dir.path().join("d.csv"), data).expect("write");
    write(dir.path(), "c.yaml", CONFIG);
    let out = regimix(dir.path(), &["check", "c.yaml"]);
    (dir, out)
}

/// The spec's example model (`docs/examples/tiny-model.rgmx`, one input `TI-1`), as a path.
fn tiny_model() -> String {
    std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../docs/examples/tiny-model.rgmx")
        .to_string_lossy()
        .to_string()
}

#[test]
fn each_bad_file_gets_one_message_naming_the_place() {
    let cases: Vec<(&[u8], &str)> = vec![
        (b"", "d.csv: the file is empty"),
        (
            b"time,X,Y\n",
            "d.csv: the file has a header but no data rows",
        ),
        (
            b"time,X,Y\n2026-03-02 00:00:00,1,2\n2026-03-02 00:01:00,1\n",
            "d.csv:3: row has 2 fields but the header has 3",
        ),
        (
            b"time,X,Y\n2026-03-02 00:00:00,1,2\n02/03/2026 00:01,1,2\n",
            "d.csv:3: column `time`: `02/03/2026 00:01` is not a timestamp",
        ),
        (
            b"time,X,Y\n2026-03-02 00:05:00,1,2\n2026-03-02 00:01:00,1,2\n",
            "d.csv:3: column `time`: time goes backwards",
        ),
        (
            b"time,Xx,Y\n2026-03-02 00:00:00,1,2\n",
            "d.csv:1: no column `X` (the input); did you mean `Xx`",
        ),
        (
            b"time,X,Y\n2026-03-02 00:00:00,1,2\n",
            "the data span less than two sample-times",
        ),
        (
            // 2026-03-02 00:00 and 00:01 as spreadsheet serial dates.
            b"time,X,Y\n46083,1,2\n46083.000694444,1,2\n",
            "the timestamps run from 1970-01-01T12:48:03Z to 1970-01-01T12:48:03.000694Z: they look like spreadsheet serial dates",
        ),
    ];
    for (data, needle) in cases {
        let (dir, out) = run_with_data(data);
        assert_clean_failure(&out, needle);
        assert_eq!(
            listing(dir.path()),
            vec!["c.yaml", "d.csv"],
            "nothing written"
        );
    }
}

#[test]
fn missing_files_and_bad_configs() {
    let dir = tempfile::tempdir().expect("tempdir");
    let out = regimix(dir.path(), &["check", "nope.yaml"]);
    assert_clean_failure(&out, "cannot read config nope.yaml");
    write(dir.path(), "c.yaml", CONFIG);
    let out = regimix(dir.path(), &["check", "c.yaml"]);
    assert_clean_failure(&out, "d.csv: cannot read");
    write(
        dir.path(),
        "typo.yaml",
        &CONFIG.replace("sample-time", "sampletime"),
    );
    let out = regimix(dir.path(), &["check", "typo.yaml"]);
    assert_clean_failure(&out, "unknown key `sampletime`");
    assert!(String::from_utf8_lossy(&out.stderr).contains("did you mean `sample-time`"));
}

#[test]
fn usage_errors_exit_non_zero() {
    let dir = tempfile::tempdir().expect("tempdir");
    let out = regimix(dir.path(), &["frobnicate"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(!String::from_utf8_lossy(&out.stderr).contains("panicked"));
}

/// `replay` reads a European export (`;`, decimal comma) to the same estimates as the plain one,
/// and refuses a decimal mark other than `.` or `,`.
#[test]
fn replay_reads_decimal_commas_alike() {
    let dir = tempfile::tempdir().expect("tempdir");
    let model = tiny_model();
    let plain = "time,TI-1\n2026-03-02 00:00:00,101.5\n2026-03-02 00:01:00,Bad\n2026-03-02 00:02:00,97.25\n";
    write(dir.path(), "plain.csv", plain);
    write(
        dir.path(),
        "comma.csv",
        &plain.replace(',', ";").replace('.', ","),
    );
    let a = regimix(dir.path(), &["replay", &model, "plain.csv"]);
    let b = regimix(
        dir.path(),
        &[
            "replay",
            &model,
            "comma.csv",
            "--delimiter",
            ";",
            "--decimal-mark",
            ",",
        ],
    );
    assert!(a.status.success(), "{}", String::from_utf8_lossy(&a.stderr));
    assert_eq!(a.stdout, b.stdout);
    assert_eq!(String::from_utf8_lossy(&a.stdout).lines().count(), 4);
    let out = regimix(
        dir.path(),
        &["replay", &model, "plain.csv", "--decimal-mark", ";"],
    );
    assert_clean_failure(&out, "--decimal-mark must be `.` or `,`");
}

/// A below-limit reading (`<5`) in an input column is not a measurement: `replay` passes it to
/// the runtime as invalid, exactly as it does a quality marker, not as the limit.
#[test]
fn replay_treats_a_below_limit_reading_as_invalid() {
    let dir = tempfile::tempdir().expect("tempdir");
    let model = tiny_model();
    let rows = |cell: &str| {
        format!("time,TI-1\n2026-03-02 00:00:00,101.5\n2026-03-02 00:01:00,{cell}\n2026-03-02 00:02:00,97.25\n")
    };
    write(dir.path(), "marker.csv", &rows("Bad"));
    write(dir.path(), "limit.csv", &rows("<5"));
    let a = regimix(dir.path(), &["replay", &model, "marker.csv"]);
    let b = regimix(dir.path(), &["replay", &model, "limit.csv"]);
    assert!(b.status.success(), "{}", String::from_utf8_lossy(&b.stderr));
    assert_eq!(a.stdout, b.stdout);
    let text = String::from_utf8_lossy(&b.stdout);
    let second = text.lines().nth(2).expect("second row");
    assert!(second.contains(",substituted,"), "{text}");
}

/// `replay --date-order` reads day-first and month-first exports to the same estimates as
/// year-first ones; without it a day-first date is a clean error that names the option.
#[test]
fn replay_reads_day_and_month_first_dates_with_date_order() {
    let dir = tempfile::tempdir().expect("tempdir");
    let model = tiny_model();
    write(
        dir.path(),
        "iso.csv",
        "time,TI-1\n2026-03-02 12:59:00,101.5\n2026-03-02 13:00:00,99.0\n2026-03-02 13:01:00,97.25\n",
    );
    write(
        dir.path(),
        "dmy.csv",
        "time,TI-1\n02.03.2026 12:59:00,101.5\n02.03.2026 13:00:00,99.0\n02.03.2026 13:01:00,97.25\n",
    );
    write(
        dir.path(),
        "mdy.csv",
        "time,TI-1\n3/2/2026 12:59:00 PM,101.5\n3/2/2026 1:00:00 PM,99.0\n3/2/2026 1:01:00 PM,97.25\n",
    );
    let iso = regimix(dir.path(), &["replay", &model, "iso.csv"]);
    assert!(
        iso.status.success(),
        "{}",
        String::from_utf8_lossy(&iso.stderr)
    );
    assert!(String::from_utf8_lossy(&iso.stdout).contains("2026-03-02T13:01:00Z"));
    for (file, order) in [("dmy.csv", "dmy"), ("mdy.csv", "mdy")] {
        let out = regimix(dir.path(), &["replay", &model, file, "--date-order", order]);
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        assert_eq!(out.stdout, iso.stdout, "{order}");
    }
    let out = regimix(dir.path(), &["replay", &model, "dmy.csv"]);
    assert_clean_failure(&out, "day or month first: pass `--date-order dmy`");
}

/// replay's hints name its options, not config keys: a `;` file read with `,` names
/// `--delimiter`, and decimal-comma numbers read with `.` (every cell text, every estimate a
/// fallback) give one warning that names `--decimal-mark ,`.
#[test]
fn replay_hints_name_its_options() {
    let dir = tempfile::tempdir().expect("tempdir");
    let model = tiny_model();
    write(
        dir.path(),
        "semi.csv",
        "time;TI-1\n2026-03-02 12:59:00;101,5\n2026-03-02 13:00:00;99,0\n2026-03-02 13:01:00;Bad\n",
    );
    let out = regimix(dir.path(), &["replay", &model, "semi.csv"]);
    assert_clean_failure(&out, "so pass `--delimiter ';'`");
    let out = regimix(
        dir.path(),
        &["replay", &model, "semi.csv", "--delimiter", ";"],
    );
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        stderr.contains("warning: TI-1: most cells are text that reads as numbers")
            && stderr.contains("pass `--decimal-mark ,`"),
        "{stderr}"
    );
    let out = regimix(
        dir.path(),
        &[
            "replay",
            &model,
            "semi.csv",
            "--delimiter",
            ";",
            "--decimal-mark",
            ",",
        ],
    );
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        stderr.contains("warning: TI-1: 1 of 3 cells are text, not numbers (most often `Bad`)")
            && !stderr.contains("--decimal-mark"),
        "{stderr}"
    );
}

/// `replay --like CONFIG` reads the CSV as the config's `data` section says (the export the
/// model was built from), giving the same table as the options spelled out; a hint then names
/// the config's keys, and the options cannot be mixed in.
#[test]
fn replay_like_a_config_reads_its_data_form() {
    let dir = tempfile::tempdir().expect("tempdir");
    let model = tiny_model();
    write(
        dir.path(),
        "semi.csv",
        "Zeit;TI-1\n02.03.2026 12:59:00;101,5\n02.03.2026 13:00:00;99,0\n02.03.2026 13:01:00;Bad\n",
    );
    let config = "data:\n  files: [semi.csv]\n  timestamp: Zeit\n  delimiter: \";\"\n  \
                  decimal-mark: \",\"\n  date-order: dmy\n  naive-offset: \"+01:00\"\n\
                  sample-time: 1min\ntarget: { tag: Y, source: analyzer }\ninputs:\n  - tag: TI-1\n";
    write(dir.path(), "c.yaml", config);
    let like = regimix(
        dir.path(),
        &["replay", &model, "semi.csv", "--like", "c.yaml"],
    );
    assert!(
        like.status.success(),
        "{}",
        String::from_utf8_lossy(&like.stderr)
    );
    let spelled = regimix(
        dir.path(),
        &[
            "replay",
            &model,
            "semi.csv",
            "--timestamp",
            "Zeit",
            "--delimiter",
            ";",
            "--decimal-mark",
            ",",
            "--date-order",
            "dmy",
            "--naive-offset",
            "+01:00",
        ],
    );
    assert!(
        spelled.status.success(),
        "{}",
        String::from_utf8_lossy(&spelled.stderr)
    );
    assert_eq!(like.stdout, spelled.stdout);
    assert!(String::from_utf8_lossy(&like.stdout).contains("2026-03-02T11:59:00Z"));

    write(
        dir.path(),
        "c.yaml",
        &config.replace("  date-order: dmy\n", ""),
    );
    let out = regimix(
        dir.path(),
        &["replay", &model, "semi.csv", "--like", "c.yaml"],
    );
    assert_clean_failure(&out, "set `date-order` to `dmy` or `mdy`");
    let out = regimix(
        dir.path(),
        &[
            "replay",
            &model,
            "semi.csv",
            "--like",
            "c.yaml",
            "--delimiter",
            ";",
        ],
    );
    assert!(!out.status.success());
    assert!(String::from_utf8_lossy(&out.stderr).contains("cannot be used with"));
}

/// `replay --naive-offset` reads timestamps without an offset as local time at that offset (the
/// output is UTC); the estimates are the same; a malformed offset is a clean error.
#[test]
fn replay_applies_the_naive_offset() {
    let dir = tempfile::tempdir().expect("tempdir");
    let model = tiny_model();
    write(
        dir.path(),
        "local.csv",
        "time,TI-1\n2026-03-02 13:00:00,101.5\n2026-03-02 13:01:00,99.0\n",
    );
    let utc = regimix(dir.path(), &["replay", &model, "local.csv"]);
    let local = regimix(
        dir.path(),
        &["replay", &model, "local.csv", "--naive-offset", "+01:00"],
    );
    assert!(
        local.status.success(),
        "{}",
        String::from_utf8_lossy(&local.stderr)
    );
    let (utc, local) = (
        String::from_utf8_lossy(&utc.stdout).to_string(),
        String::from_utf8_lossy(&local.stdout).to_string(),
    );
    assert!(utc.contains("2026-03-02T13:00:00Z,"), "{utc}");
    assert!(local.contains("2026-03-02T12:00:00Z,"), "{local}");
    assert_eq!(utc.replace("T13:0", "T12:0"), local, "only the times move");
    let out = regimix(
        dir.path(),
        &["replay", &model, "local.csv", "--naive-offset", "CET"],
    );
    assert_clean_failure(
        &out,
        "--naive-offset must be like `+01:00`, `-05:30` or `UTC`, not `CET`",
    );
}
