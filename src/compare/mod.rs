//! Compare: pairs of records in, agreement levels per attribute out.

pub mod strings;
