//! Validation cases of the whole job against known answers, one case per file. Each file states
//! its source, metric and threshold.

#[path = "../cli/harness.rs"]
#[allow(dead_code)] // the validation cases use only part of the shared harness
mod harness;
mod survey_truth;
