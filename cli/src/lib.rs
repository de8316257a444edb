//! The parts of the command line other crates (the fuzzer) reach; the
//! commands themselves are in the `tussock` binary (`main.rs`).

pub mod parse;
