//! Figures over a box of input tolerances (`analysis::tolerances`) against a dense grid: the
//! reported extremes are no worse than those of a 20 x 20 grid of the same box (the issue's
//! check), on two inputs of a bundled example, and the extremes of a figure monotone in one
//! input sit at the ends of its tolerance (common practice: a wider comparator band never
//! raises the false alarm).

use concord::analysis::sensitivity::figures_of;
use concord::analysis::tolerances::over_box;
use concord::analysis::{AnalysisOptions, analyze};
use concord::model::load_str;

#[test]
fn the_extremes_are_no_worse_than_a_20_by_20_grid() {
    let text = include_str!("../architectures/plovrant_swa2_mean.toml");
    let arch = load_str(text, "swa2").expect("valid");
    let options = AnalysisOptions::default();
    let within = [
        ("checks.ab.limit".to_string(), 2.0, 3.0),
        ("channels.hall_b.sigma".to_string(), 0.45, 0.65),
    ];
    let found = over_box(&arch, &within, &options).expect("box");
    let n = 20;
    let mut low = vec![f64::INFINITY; found.figures.len()];
    let mut high = vec![f64::NEG_INFINITY; found.figures.len()];
    for i in 0..n {
        for j in 0..n {
            let x = 2.0 + 1.0 * i as f64 / (n - 1) as f64;
            let y = 0.45 + 0.2 * j as f64 / (n - 1) as f64;
            let edited = arch
                .with_overrides(&[
                    ("checks.ab.limit".into(), x),
                    ("channels.hall_b.sigma".into(), y),
                ])
                .expect("valid in the box");
            let a = analyze(&edited.model, &options, false).expect("analysis");
            let figures = figures_of(&a);
            for (k, f) in found.figures.iter().enumerate() {
                if let Some(g) = figures
                    .iter()
                    .find(|g| g.site == f.site && g.figure == f.figure)
                {
                    low[k] = low[k].min(g.value.value);
                    high[k] = high[k].max(g.value.value);
                }
            }
        }
    }
    for (k, f) in found.figures.iter().enumerate() {
        let slack = 1e-12 + f.lowest.error.max(f.highest.error);
        assert!(
            f.lowest.value <= low[k] + slack,
            "{:?} {}: lowest {} above the grid's {}",
            f.site,
            f.figure,
            f.lowest.value,
            low[k]
        );
        assert!(
            f.highest.value >= high[k] - slack,
            "{:?} {}: highest {} below the grid's {}",
            f.site,
            f.figure,
            f.highest.value,
            high[k]
        );
    }
}

#[test]
fn a_figure_monotone_in_one_input_has_its_extremes_at_the_ends() {
    // Common practice: widening a comparator band can only lower the fault-free false alarm,
    // so over a tolerance of the band its highest value is at the narrowest band.
    let text = include_str!("../architectures/plovrant_swa2_mean.toml");
    let arch = load_str(text, "swa2").expect("valid");
    let within = [("checks.ab.limit".to_string(), 2.0, 3.0)];
    let found = over_box(&arch, &within, &AnalysisOptions::default()).expect("box");
    let fa = found
        .figures
        .iter()
        .find(|f| f.site.is_none() && f.figure == "false_alarm")
        .expect("false alarm");
    assert_eq!(fa.highest_at, vec![2.0]);
    assert_eq!(fa.lowest_at, vec![3.0]);
    assert!(fa.monotone);
}

#[test]
fn a_key_that_is_no_input_is_refused_with_the_inputs_named() {
    let text = include_str!("../architectures/plovrant_swa2_mean.toml");
    let arch = load_str(text, "swa2").expect("valid");
    let e = over_box(
        &arch,
        &[("checks.ab.width".to_string(), 1.0, 2.0)],
        &AnalysisOptions::default(),
    )
    .expect_err("no such input");
    let text = e.to_string();
    assert!(
        text.contains("checks.ab.width") && text.contains("checks.ab.limit"),
        "{text}"
    );
}

#[test]
fn a_tolerances_section_is_read_and_checked() {
    let text = include_str!("../architectures/plovrant_swa2_mean.toml");
    let arch = load_str(text, "swa2").expect("valid");
    assert_eq!(
        arch.tolerances,
        vec![
            ("channels.hall_b.sigma".to_string(), 0.45, 0.65),
            ("checks.ab.limit".to_string(), 2.3, 2.7),
        ]
    );
    // A key that names no number, an empty range, an unquoted dotted key: each refused with
    // the key named (docs/architecture-format.md, "Tolerances").
    let base = text.split("[tolerances]").next().expect("head");
    for (section, needle) in [
        ("\"checks.ab.width\" = [1.0, 2.0]", "checks.ab.width"),
        ("\"checks.ab.limit\" = [2.7, 2.3]", "empty"),
        ("checks.ab.limit = [2.3, 2.7]", "quote"),
    ] {
        let bad = format!("{base}[tolerances]\n{section}\n");
        let e = load_str(&bad, "bad.toml").expect_err("refused");
        assert!(e.to_string().contains(needle), "{section}: {e}");
    }
}

#[test]
fn six_tolerances_are_no_worse_than_the_corners_and_random_points_of_the_box() {
    // Six inputs: a grid of three points per input (729 analyses) refined where a figure is
    // not monotone. Its extremes must be no worse than every corner of the box (64) and than
    // 40 points drawn uniformly in it (a fixed linear congruential sequence; Knuth, TAOCP
    // vol. 2, 3.2.1, multiplier 6364136223846793005, from memory).
    let text = include_str!("../architectures/plovrant_swa2_mean.toml");
    let arch = load_str(text, "swa2").expect("valid");
    let options = AnalysisOptions::default();
    let within = [
        ("checks.ab.limit".to_string(), 2.0, 3.0),
        ("channels.hall_b.sigma".to_string(), 0.45, 0.65),
        ("channels.hall_a.sigma".to_string(), 0.4, 0.6),
        ("safety.limit".to_string(), 1.8, 2.2),
        ("faults.a_drift.fit".to_string(), 15.0, 25.0),
        ("correlations.0.rho".to_string(), 0.1, 0.4),
    ];
    let found = over_box(&arch, &within, &options).expect("box");
    assert_eq!(found.grid_points, 3);
    let mut points: Vec<Vec<f64>> = (0..64)
        .map(|c: usize| {
            within
                .iter()
                .enumerate()
                .map(|(i, (_, lo, hi))| if c >> i & 1 == 0 { *lo } else { *hi })
                .collect()
        })
        .collect();
    let mut state: u64 = 0x5eed;
    for _ in 0..40 {
        points.push(
            within
                .iter()
                .map(|(_, lo, hi)| {
                    state = state
                        .wrapping_mul(6364136223846793005)
                        .wrapping_add(1442695040888963407);
                    let u = (state >> 11) as f64 / (1u64 << 53) as f64;
                    lo + (hi - lo) * u
                })
                .collect(),
        );
    }
    for p in &points {
        let overrides: Vec<(String, f64)> = within
            .iter()
            .zip(p)
            .map(|((k, _, _), v)| (k.clone(), *v))
            .collect();
        let edited = arch.with_overrides(&overrides).expect("valid in the box");
        let a = analyze(&edited.model, &options, false).expect("analysis");
        for g in figures_of(&a) {
            let Some(f) = found
                .figures
                .iter()
                .find(|f| f.site == g.site && f.figure == g.figure)
            else {
                continue;
            };
            let slack = 1e-12 + f.lowest.error.max(f.highest.error) + g.value.error;
            assert!(
                f.lowest.value <= g.value.value + slack,
                "{:?} {}: lowest {} above {} at {p:?}",
                f.site,
                f.figure,
                f.lowest.value,
                g.value.value
            );
            assert!(
                f.highest.value >= g.value.value - slack,
                "{:?} {}: highest {} below {} at {p:?}",
                f.site,
                f.figure,
                f.highest.value,
                g.value.value
            );
        }
    }
}
