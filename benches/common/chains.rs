//! Architecture files the benchmarks share: a median of N channels with a range check over
//! all N, one shared supply and one known-sigma drift (invented numbers).

/// The median of `n` channels (`n` from 2 to 16) on one supply, with a range check over all
/// and a gaussian drift of known sigma on the first channel.
pub fn median_file(n: usize) -> String {
    let names: Vec<String> = (0..n).map(|i| format!("c{i}")).collect();
    let mut s = String::from(
        "name = \"bench\"\nunit = \"mm\"\nfull_scale = [-50.0, 50.0]\n\n[sources.supply]\nsigma = 0.2\n\n",
    );
    for (i, name) in names.iter().enumerate() {
        s.push_str(&format!(
            "[channels.{name}]\nmean = {}\nsigma = {}\nfrom = {{ supply = 1.0 }}\n\n",
            0.02 * i as f64 - 0.05,
            0.4 + 0.02 * i as f64
        ));
    }
    let all = names
        .iter()
        .map(|x| format!("\"{x}\""))
        .collect::<Vec<_>>()
        .join(", ");
    s.push_str(&format!(
        "[output]\nkind = \"median\"\nof = [{all}]\n\n[checks.all]\nkind = \"range\"\nof = [{all}]\n\
         upper = 2.5\n\n[safety]\nlimit = 1.5\n\n[faults.drift]\nfit = 10.0\nhits = {{ c0 = 1.0 }}\n\
         mode = \"add\"\namplitude = {{ gaussian = {{ mean = 0.5, sigma = 2.0 }} }}\n"
    ));
    s
}
