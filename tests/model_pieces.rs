//! Property tests of the compiled piecewise-linear functions: on random architectures
//! (random channels, derived signals over channels and other signals, every output kind and
//! every check kind), the compiled output, checks and signals agree with a direct evaluation
//! of the definitions written here independently (sorting for median, min, max and range),
//! and every point, including points with exact ties, lies in exactly one piece.

use concord::model::{self, Guard, PiecewiseLinear, guards_contradict};
use proptest::prelude::*;

/// xorshift64 (Marsaglia 2003): a small deterministic generator for building random specs.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 << 13;
        self.0 ^= self.0 >> 7;
        self.0 ^= self.0 << 17;
        self.0
    }
    fn below(&mut self, n: usize) -> usize {
        (self.next() % n as u64) as usize
    }
    fn weight(&mut self) -> f64 {
        // multiples of 1/8 in [-2, 2], never 0
        let k = self.below(32) as i64 - 16;
        if k == 0 { 0.375 } else { k as f64 / 8.0 }
    }
    /// `min + below(extra)` distinct readings out of `pool`.
    fn some(&mut self, pool: usize, min: usize, extra: usize) -> Vec<usize> {
        let k = min + self.below(extra);
        self.distinct(pool, k)
    }
    /// 1 to 3 distinct readings with random weights.
    fn terms(&mut self, pool: usize) -> Vec<(usize, f64)> {
        let rs = self.some(pool, 1, 3);
        rs.into_iter().map(|r| (r, self.weight())).collect()
    }
    fn distinct(&mut self, pool: usize, k: usize) -> Vec<usize> {
        let mut v: Vec<usize> = (0..pool).collect();
        for i in 0..pool {
            let j = i + self.below(pool - i);
            v.swap(i, j);
        }
        v.truncate(k.min(pool));
        v
    }
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum Stat {
    Median,
    Min,
    Max,
    Range,
}

/// A function of readings; reading r < n is channel r, r >= n is signal r - n.
#[derive(Debug, Clone)]
enum Def {
    Linear(Vec<(usize, f64)>, f64),
    Mean(Vec<usize>),
    Select(usize),
    Order(Stat, Vec<usize>),
    Difference(usize, usize),
    FromOutput(usize),
}

#[derive(Debug, Clone)]
struct Spec {
    n: usize,
    signals: Vec<Def>,
    output: (String, Def),
    checks: Vec<(String, Def)>,
}

fn reading_name(spec_n: usize, r: usize) -> String {
    if r < spec_n {
        format!("c{r}")
    } else {
        format!("s{}", r - spec_n)
    }
}

fn random_spec(seed: u64, n: usize) -> Spec {
    let mut g = Rng(seed | 1);
    let n_signals = g.below(4);
    let mut signals = Vec::new();
    for j in 0..n_signals {
        let pool = n + j; // channels and earlier signals
        let def = match g.below(4) {
            0 => {
                let terms = g.terms(pool);
                Def::Linear(terms, g.weight())
            }
            w => {
                let stat = [Stat::Median, Stat::Min, Stat::Max][w - 1];
                Def::Order(stat, g.some(pool, 2, 2))
            }
        };
        signals.push(def);
    }
    let pool = n + n_signals;
    let output = match g.below(7) {
        0 => ("mean".into(), Def::Mean(g.some(pool, 1, 3))),
        1 => {
            let v = g.distinct(pool, 2);
            let w = (1 + g.below(7)) as f64 / 8.0;
            (
                "weighted".into(),
                Def::Linear(vec![(v[0], w), (v[1], 1.0 - w)], 0.0),
            )
        }
        2 => ("select".into(), Def::Select(g.below(pool))),
        3 => (
            "median".into(),
            Def::Order(Stat::Median, g.some(pool, 2, 3)),
        ),
        4 => ("min".into(), Def::Order(Stat::Min, g.some(pool, 2, 2))),
        5 => ("max".into(), Def::Order(Stat::Max, g.some(pool, 2, 2))),
        _ => {
            let terms = g.terms(pool);
            ("linear".into(), Def::Linear(terms, g.weight()))
        }
    };
    let mut checks = Vec::new();
    for _ in 0..1 + g.below(3) {
        let c = match g.below(4) {
            0 => {
                let v = g.distinct(pool, 2);
                ("difference".into(), Def::Difference(v[0], v[1]))
            }
            1 => ("range".into(), Def::Order(Stat::Range, g.some(pool, 2, 2))),
            2 => ("from_output".into(), Def::FromOutput(g.below(pool))),
            _ => {
                let terms = g.terms(pool);
                ("linear".into(), Def::Linear(terms, g.weight()))
            }
        };
        checks.push(c);
    }
    Spec {
        n,
        signals,
        output,
        checks,
    }
}

fn names(n: usize, rs: &[usize]) -> String {
    rs.iter()
        .map(|r| format!("\"{}\"", reading_name(n, *r)))
        .collect::<Vec<_>>()
        .join(", ")
}

fn weights(n: usize, terms: &[(usize, f64)]) -> String {
    terms
        .iter()
        .map(|(r, w)| format!("{} = {w:?}", reading_name(n, *r)))
        .collect::<Vec<_>>()
        .join(", ")
}

fn def_toml(n: usize, kind: &str, d: &Def) -> String {
    match d {
        Def::Linear(t, c) if kind == "weighted" => {
            let _ = c;
            format!("kind = \"weighted\"\nof = {{ {} }}\n", weights(n, t))
        }
        Def::Linear(t, c) => format!(
            "kind = \"linear\"\nof = {{ {} }}\nconstant = {c:?}\n",
            weights(n, t)
        ),
        Def::Mean(rs) => format!("kind = \"mean\"\nof = [{}]\n", names(n, rs)),
        Def::Select(r) => format!("kind = \"select\"\nof = \"{}\"\n", reading_name(n, *r)),
        Def::Order(s, rs) => {
            let k = match s {
                Stat::Median => "median",
                Stat::Min => "min",
                Stat::Max => "max",
                Stat::Range => "range",
            };
            format!("kind = \"{k}\"\nof = [{}]\n", names(n, rs))
        }
        Def::Difference(a, b) => format!("kind = \"difference\"\nof = [{}]\n", names(n, &[*a, *b])),
        Def::FromOutput(r) => format!("kind = \"from_output\"\nof = \"{}\"\n", reading_name(n, *r)),
    }
}

fn to_toml(s: &Spec) -> String {
    let mut t = String::from("name = \"random\"\nunit = \"u\"\n");
    for i in 0..s.n {
        t.push_str(&format!("[channels.c{i}]\nsigma = 1.0\n"));
    }
    // signals written in reverse order, so that the file order is not the evaluation order
    for (j, d) in s.signals.iter().enumerate().rev() {
        t.push_str(&format!("[signals.s{j}]\n{}", def_toml(s.n, "", d)));
    }
    t.push_str(&format!(
        "[output]\n{}",
        def_toml(s.n, &s.output.0, &s.output.1)
    ));
    for (k, (kind, d)) in s.checks.iter().enumerate() {
        t.push_str(&format!(
            "[checks.k{k}]\n{}limit = 1.0\n",
            def_toml(s.n, kind, d)
        ));
    }
    t.push_str("[safety]\nlimit = 1.0\n");
    t
}

/// Direct evaluation of the definitions.
struct Direct<'a> {
    spec: &'a Spec,
    x: &'a [f64],
}

impl Direct<'_> {
    fn reading(&self, r: usize) -> f64 {
        if r < self.spec.n {
            self.x[r]
        } else {
            self.def(&self.spec.signals[r - self.spec.n])
        }
    }
    fn output(&self) -> f64 {
        self.def(&self.spec.output.1)
    }
    fn def(&self, d: &Def) -> f64 {
        match d {
            Def::Linear(t, c) => t.iter().map(|(r, w)| w * self.reading(*r)).sum::<f64>() + c,
            Def::Mean(rs) => rs.iter().map(|r| self.reading(*r)).sum::<f64>() / rs.len() as f64,
            Def::Select(r) => self.reading(*r),
            Def::Difference(a, b) => self.reading(*a) - self.reading(*b),
            Def::FromOutput(r) => self.reading(*r) - self.output(),
            Def::Order(s, rs) => {
                let mut v: Vec<f64> = rs.iter().map(|r| self.reading(*r)).collect();
                v.sort_by(f64::total_cmp);
                let k = v.len();
                match s {
                    Stat::Min => v[0],
                    Stat::Max => v[k - 1],
                    Stat::Range => v[k - 1] - v[0],
                    Stat::Median if k % 2 == 1 => v[k / 2],
                    Stat::Median => 0.5 * (v[k / 2 - 1] + v[k / 2]),
                }
            }
        }
    }
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-9 * (1.0 + a.abs().max(b.abs()))
}

/// The guards of two pieces cannot hold together: one of them is the exact negation of
/// the other's, or three of them close a cycle ("a before b before c before a", one strict).
fn disjoint(a: &[Guard], b: &[Guard]) -> bool {
    if a.iter().any(|g| b.iter().any(|h| g.is_negation_of(h))) {
        return true;
    }
    let both: Vec<&Guard> = a.iter().chain(b).collect();
    guards_contradict(&both)
}

/// Every two pieces of one function are provably disjoint from their guards alone.
fn pieces_pairwise_separated(f: &PiecewiseLinear) -> bool {
    let separated = |a: &[Guard], b: &[Guard]| disjoint(a, b);
    for i in 0..f.pieces.len() {
        for j in i + 1..f.pieces.len() {
            if !separated(&f.pieces[i].guards, &f.pieces[j].guards) {
                return false;
            }
        }
    }
    true
}

fn check_point(spec: &Spec, arch: &model::Architecture, x: &[f64]) -> Result<(), TestCaseError> {
    let m = &arch.model;
    let d = Direct { spec, x };
    let mut fns: Vec<(&str, &PiecewiseLinear, f64)> = vec![("output", &m.output, d.output())];
    for (k, c) in m.checks.iter().enumerate() {
        fns.push((c.name.as_str(), &c.function, d.def(&spec.checks[k].1)));
    }
    for (name, f) in &m.signals {
        let j: usize = name[1..]
            .parse()
            .map_err(|_| TestCaseError::fail("signal name"))?;
        fns.push((name.as_str(), f, d.def(&spec.signals[j])));
    }
    for (name, f, want) in fns {
        prop_assert_eq!(f.count_containing(x), 1, "{} at {:?}", name, x);
        let got = f.eval(x);
        prop_assert!(
            close(got, want),
            "{}: compiled {} vs direct {} at {:?}",
            name,
            got,
            want,
            x
        );
    }
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 300, ..ProptestConfig::default() })]

    #[test]
    fn compiled_functions_agree_with_direct_evaluation(
        seed in any::<u64>(),
        n in 2usize..=5,
        points in proptest::collection::vec(proptest::collection::vec(-5.0f64..5.0, 5), 8),
        ties in proptest::collection::vec(proptest::collection::vec(-1i32..=1, 5), 8),
    ) {
        let spec = random_spec(seed, n);
        let text = to_toml(&spec);
        let arch = match model::load_str(&text, "random.toml") {
            Ok(a) => a,
            Err(e) => {
                // only the piece limits may reject a random spec
                prop_assert!(e.to_string().contains("limit"), "{}\n{}", e, text);
                return Ok(());
            }
        };
        for p in &points {
            check_point(&spec, &arch, &p[..n])?;
        }
        // points with exact ties between channels (values from {-1, 0, 1})
        for t in &ties {
            let x: Vec<f64> = t[..n].iter().map(|v| *v as f64).collect();
            check_point(&spec, &arch, &x)?;
        }
        let all_equal = vec![0.5; n];
        check_point(&spec, &arch, &all_equal)?;
        prop_assert!(pieces_pairwise_separated(&arch.model.output), "{}", text);
        for c in &arch.model.checks {
            prop_assert!(pieces_pairwise_separated(&c.function), "check {} {}", c.name, text);
        }
    }
}

#[test]
fn order_statistics_over_the_same_channels_share_guards_whatever_the_order_written() {
    // median over [a, b, c] and range over [c, a, b]: each median piece is compatible with
    // exactly one range piece (same guards: below before middle before above is first before
    // middle before last); every other pair holds a guard and its negation or a cycle.
    let text = r#"
name = "tie-break"
unit = "u"
[channels.a]
sigma = 1.0
[channels.b]
sigma = 1.0
[channels.c]
sigma = 1.0
[output]
kind = "median"
of = ["a", "b", "c"]
[checks.s]
kind = "range"
of = ["c", "a", "b"]
limit = 1.0
[safety]
limit = 1.0
"#;
    let a = model::load_str(text, "t.toml").unwrap_or_else(|e| panic!("{e}"));
    let out = &a.model.output;
    let range = &a.model.checks[0].function;
    assert_eq!(out.pieces.len(), 6);
    assert_eq!(range.pieces.len(), 6);
    for p in &out.pieces {
        let mut same = 0;
        for q in &range.pieces {
            if !disjoint(&p.guards, &q.guards) {
                assert_eq!(p.guards, q.guards);
                same += 1;
            }
        }
        assert_eq!(same, 1);
    }
}

#[test]
fn median_of_seven_has_140_pieces_and_median_of_twelve_is_not_multiplied_out() {
    let mut text = String::from("name = \"m\"\nunit = \"u\"\n");
    for i in 0..12 {
        text.push_str(&format!("[channels.c{i}]\nsigma = 1.0\n"));
    }
    let of = |k: usize| {
        (0..k)
            .map(|i| format!("\"c{i}\""))
            .collect::<Vec<_>>()
            .join(", ")
    };
    let file = |k: usize| {
        format!(
            "{text}[output]\nkind = \"median\"\nof = [{}]\n\
             [checks.d]\nkind = \"difference\"\nof = [\"c10\", \"c11\"]\nlimit = 1.0\n\
             [safety]\nlimit = 1.0\n",
            of(k)
        )
    };
    // which reading is the middle (7) and which three of the other six lie below it
    // (C(6, 3) = 20): 140 rank patterns where the orderings are 7! = 5040, each with three
    // guards below the middle and three above (combinatorics, common practice)
    let a = model::load_str(&file(7), "m7.toml").unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(a.model.output.pieces.len(), 140);
    assert!(a.model.output.pieces.iter().all(|p| p.guards.len() == 6));
    let x = [3.0, -1.0, 4.0, 1.0, -5.0, 9.0, 2.0, 0.0, 0.0, 0.0, 0.0, 0.0];
    // sorted: -5 -1 1 2 3 4 9 -> median 2
    assert_eq!(a.model.output.eval(&x), 2.0);
    assert_eq!(a.model.output.count_containing(&x), 1);
    // the even median of eight: which pair is in the middle (C(8, 2) = 28) and which three
    // of the other six lie below (20): 560 pieces
    let a = model::load_str(&file(8), "m8.toml").unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(a.model.output.pieces.len(), 560);
    // sorted: -5 -1 0 1 2 3 4 9 -> (1 + 2) / 2 (by hand)
    assert_eq!(a.model.output.eval(&x), 1.5);
    assert_eq!(a.model.output.count_containing(&x), 1);
    // twelve: C(12, 2) C(10, 5) = 66 x 252 = 16632 pieces pass MAX_PIECES: the file loads,
    // the pieces are not built, and the formula gives the mean of the two middle values.
    let a = model::load_str(&file(12), "m12.toml").unwrap_or_else(|e| panic!("{e}"));
    assert!(!a.model.pieces_complete);
    assert!(a.model.output.pieces.is_empty());
    // sorted: -5 -1 0 0 0 0 0 0 1 2 3 4 9 without one zero -> (0 + 0) / 2
    assert_eq!(a.model.output_formula.eval(&x), 0.0);
}
