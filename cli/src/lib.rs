//! The parts of the command line other crates (the fuzzer, the browser
//! benchmark) reach; the commands themselves are in the `tussock` binary
//! (`main.rs`).

pub mod parallel;
pub mod parse;
