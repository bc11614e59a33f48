//! Warnings: the file is accepted, but something looks unintended. They are kept apart from
//! errors, in `Architecture::warnings`.

use concord::model;

const BASE: &str = r#"
name = "warnings"
unit = "mm"
[sources.supply]
sigma = 0.1
[sources.spare]
sigma = 0.1
[channels.a]
sigma = 0.5
from = { supply = 1.0 }
[channels.b]
sigma = 0.5
from = { supply = 0.0 }
[channels.unused]
sigma = 0.5
[signals.lonely]
kind = "linear"
of = { a = 0.5, b = 0.5 }
[output]
kind = "linear"
of = { a = 0.6, b = 0.6 }
[checks.ab]
kind = "linear"
of = { a = 1.0, b = -0.5 }
limit = 1.0
[safety]
limit = 1.0
[faults.nothing]
fit = 0.0
hits = { spare = 1.0 }
mode = "add"
amplitude = { gaussian = { mean = 0.0, sigma = 1.0 } }
"#;

#[test]
fn each_oddity_gives_one_warning_with_its_key() {
    let a = model::load_str(BASE, "w.toml").unwrap_or_else(|e| panic!("{e}"));
    let keys: Vec<(&str, &str)> = a
        .warnings
        .iter()
        .map(|w| (w.key.as_str(), w.message.as_str()))
        .collect();
    let has =
        |key: &str, fragment: &str| keys.iter().any(|(k, m)| *k == key && m.contains(fragment));
    assert!(a.warnings.iter().all(|w| w.is_warning()));
    assert!(has("sources.spare", "feeds no channel"), "{keys:?}");
    assert!(has("channels.b.from.supply", "gain 0"), "{keys:?}");
    assert!(
        has(
            "channels.unused",
            "used by neither the output nor any check"
        ),
        "{keys:?}"
    );
    assert!(has("signals.lonely", "used by neither"), "{keys:?}");
    // 0.6 + 0.6 = 1.2: the output deviation would depend on the true value
    assert!(has("output", "sum to 1.2"), "{keys:?}");
    // 1 - 0.5 = 0.5: the check value would depend on the true value
    assert!(has("checks.ab", "sum to 0.5"), "{keys:?}");
    assert!(has("faults.nothing.fit", "0 FIT"), "{keys:?}");
    assert!(has("faults.nothing", "reaches no channel"), "{keys:?}");
    assert_eq!(a.warnings.len(), 8, "{keys:?}");
    // warnings carry positions and print as warnings
    for w in &a.warnings {
        assert!(w.to_string().contains(": warning: "), "{w}");
    }
}

#[test]
fn no_checks_and_no_faults_are_warned_about() {
    let text = "name = \"x\"\nunit = \"u\"\n[channels.a]\nsigma = 1.0\n[output]\nkind = \"select\"\n\
                of = \"a\"\n[safety]\nupper = 3.0\n";
    let a = model::load_str(text, "x.toml").unwrap_or_else(|e| panic!("{e}"));
    let msgs: Vec<&str> = a.warnings.iter().map(|w| w.message.as_str()).collect();
    assert!(msgs.iter().any(|m| m.contains("no checks")), "{msgs:?}");
    assert!(
        msgs.iter().any(|m| m.contains("no fault sites")),
        "{msgs:?}"
    );
    // one-sided safety band
    assert_eq!(a.model.safety_lower, f64::NEG_INFINITY);
    assert_eq!(a.model.safety_upper, 3.0);
}
