//! The cautions that every report carries.

/// The cautions, one paragraph each.
pub const CAUTIONS: [&str; 3] = [
    "The figures are estimates under the stated assumptions (gaussian noise, independent fault \
     sites, the fault models of the file); their error bounds cover the numerical method only, \
     not the model.",
    "The analyst remains responsible for the inputs, for the fault models and for how the \
     figures enter the safety case.",
    "The applicable standards (ISO 26262, IEC 61508), the assessor and local practice decide \
     what is acceptable; the ASIL targets printed here are recalled from ISO 26262-5:2018, not \
     checked against the published text, and must be checked against the standard in force.",
];

/// The cautions in short, for the caption of a picture, which travels without the rest of
/// the output.
pub const CAUTION_SHORT: &str = "Caution: estimates under the file's assumptions (gaussian \
     noise, independent fault sites, its fault models); error bounds cover the numerical method \
     only. The analyst remains responsible; the applicable standards, the assessor and local \
     practice decide what is acceptable. DC levels and ASIL targets are recalled, not checked \
     against the published text.";

/// The caption of every picture of `sweep` and `tune`.
pub fn plot_caption() -> Vec<String> {
    vec![CAUTION_SHORT.to_string()]
}

/// The comment block that opens every CSV output (analyze, compare, sweep, tune): the tool
/// and the cautions, each line starting with `#` (skip those lines, or tell the CSV reader
/// that `#` starts a comment).
pub fn csv_comment_block() -> String {
    let mut out = format!("# concord {}\n", super::TOOL_VERSION);
    for c in CAUTIONS {
        for line in super::format::wrap(&format!("Caution: {c}"), 96) {
            out.push_str(&format!("# {}\n", line.trim_end()));
        }
    }
    out
}
