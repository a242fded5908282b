//! Expectation–maximisation for the Fellegi–Sunter model (being written).
