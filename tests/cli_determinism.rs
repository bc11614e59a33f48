//! Determinism: the same file gives byte-identical JSON across runs and thread counts
//! (RAYON_NUM_THREADS = 1 and 2), for every bundled example (the four-channel one through
//! the library at a looser tolerance: a minute and a half per run at the default), and for
//! the Monte Carlo method and cross-check.

use std::process::Command;

fn concord(args: &[&str], threads: &str) -> Vec<u8> {
    let out = Command::new(env!("CARGO_BIN_EXE_concord"))
        .args(args)
        .env("RAYON_NUM_THREADS", threads)
        .output()
        .expect("run concord");
    assert!(
        out.status.success(),
        "{args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    out.stdout
}

const EXAMPLES: [&str; 4] = [
    "architectures/plovrant_swa2_mean.toml",
    "architectures/plovrant_swa2_plausibility.toml",
    "architectures/plovrant_swa2_shared_ref.toml",
    "architectures/plovrant_swa3_median.toml",
];

#[test]
fn exact_json_is_identical_for_one_and_two_threads() {
    for file in EXAMPLES {
        let args = ["analyze", file, "--format", "json", "--with-curves"];
        let one = concord(&args, "1");
        let two = concord(&args, "2");
        assert!(one == two, "{file}: output differs between 1 and 2 threads");
        assert!(!one.is_empty());
    }
}

#[test]
fn monte_carlo_json_is_identical_for_one_and_two_threads() {
    let file = EXAMPLES[0];
    let args = [
        "analyze",
        file,
        "--format",
        "json",
        "--method",
        "montecarlo",
        "--samples",
        "100000",
    ];
    assert!(concord(&args, "1") == concord(&args, "2"));
    let args = ["analyze", file, "--format", "json", "--verify", "50000"];
    assert!(concord(&args, "1") == concord(&args, "2"));
}

/// The four-channel example too, through the library at a looser polytope tolerance (the
/// default takes a minute and a half per run): the same code paths (sites in parallel,
/// each sequential and seeded, the r >= 4 lattice rule) in thread pools of 1 and 2
/// threads give the same JSON bytes.
#[test]
fn four_channel_json_is_identical_for_one_and_two_threads() {
    use concord::analysis::{AnalysisOptions, analyze};
    use concord::report::{ReportInput, json};
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("architectures/plovrant_swa4_dual_pair.toml");
    let arch = concord::model::load(&path).expect("the example loads");
    let options = AnalysisOptions {
        polytope_abs: 1e-6,
        polytope_rel: 1e-3,
        ..AnalysisOptions::default()
    };
    let run = |threads: usize| -> String {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .expect("a thread pool");
        let analysis = pool
            .install(|| analyze(&arch.model, &options, true))
            .expect("the example runs");
        json::render(&ReportInput {
            architecture: &arch,
            analysis: &analysis,
            method: "exact",
            verification: None,
        })
        .expect("JSON")
    };
    let (one, two) = (run(1), run(2));
    assert!(
        one == two,
        "four-channel JSON differs between 1 and 2 threads"
    );
    assert!(one.contains("\"sites\""), "{}", &one[..one.len().min(200)]);
}
