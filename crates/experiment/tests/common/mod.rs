//! Helpers shared by several integration-test binaries of this crate.
// Each test binary compiles this module on its own and uses only part of it.
#![allow(dead_code)]

pub mod fits;
pub mod report_links;
