//! Integration tests: run the `samekey` binary on small data.

mod bad_input;
mod cli;
mod common;
mod contract;
mod corpus;
mod dbsources;
mod durable;
mod evaluate;
mod exit_codes;
mod fuzz;
mod help;
mod link;
mod module_graph;
mod plan;
mod refresh;
mod tricky;
