//! End-to-end tests of the `vortcat` binary: run the built executable on files in a temporary
//! folder and check exit code, standard output and standard error.

mod bad_input;
mod harness;
mod inspect;
mod merge;
mod report;
mod survey;
mod volume;
