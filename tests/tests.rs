//! Integration tests: run the `kinlink` binary on small data.

mod evaluate;
