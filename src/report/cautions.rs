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
