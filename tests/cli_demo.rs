//! `concord demo`: runs with no input into a folder and writes every file it lists; the
//! reports there parse as XML.

use std::process::Command;

#[test]
fn demo_writes_every_file_it_lists() {
    let dir = std::env::temp_dir().join(format!("concord-demo-test-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    let run = Command::new(env!("CARGO_BIN_EXE_concord"))
        .args([
            "demo",
            "--out",
            dir.to_str().expect("utf-8"),
            "--date",
            "2026-03-31",
        ])
        .output()
        .expect("runs");
    let stdout = String::from_utf8_lossy(&run.stdout);
    assert!(
        run.status.success(),
        "{stdout}\n{}",
        String::from_utf8_lossy(&run.stderr)
    );
    let listed: Vec<&str> = stdout
        .lines()
        .filter_map(|l| l.split_whitespace().next())
        .filter(|w| w.starts_with(dir.to_str().expect("utf-8")))
        .collect();
    assert!(listed.len() >= 10, "{stdout}");
    for path in &listed {
        let meta = std::fs::metadata(path).unwrap_or_else(|_| panic!("{path} missing"));
        assert!(meta.len() > 0, "{path} is empty");
    }
    for name in [
        "compare.txt",
        "tune-trubelka_2oo3_median.txt",
        "tune-trubelka_2oo3_median.csv",
        "tune-trubelka_2oo3_median.svg",
        "report-trubelka_1oo2_difference.html",
        "report-trubelka_1oo2_plausibility.html",
        "report-trubelka_2oo3_median.html",
    ] {
        assert!(
            listed.iter().any(|p| p.ends_with(name)),
            "{name} not listed"
        );
    }
    for path in listed.iter().filter(|p| p.ends_with(".html")) {
        let html = std::fs::read_to_string(path).expect("read");
        let options = roxmltree::ParsingOptions {
            allow_dtd: true,
            ..roxmltree::ParsingOptions::default()
        };
        let parsed = roxmltree::Document::parse_with_options(&html, options);
        assert!(parsed.is_ok(), "{path}: not well-formed");
    }
    let _ = std::fs::remove_dir_all(&dir);
}
