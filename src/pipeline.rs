//! Orchestration of the pipeline stages (being written).
