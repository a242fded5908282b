//! String comparison kernels for short values such as names and street names.
//!
//! In: two strings (or one query and many candidates), already standardised: Unicode
//! normalised and case folded by the standardize stage; ASCII-folded for [`soundex`].
//! Out: a similarity in `[0, 1]`, an edit distance, or a phonetic code. Nothing here fails or
//! panics on any input; empty strings have defined results (see each function).
//!
//! | function | result | matches |
//! |---|---|---|
//! | [`jaro`], [`jaro_winkler`] | similarity in `[0, 1]` | `strsim::jaro`, `strsim::jaro_winkler`, jellyfish 1.x and rapidfuzz 3.x defaults |
//! | [`JaroMatcher`], [`JaroCorpus`] | the same, one query against many strings | the free functions |
//! | [`levenshtein`], [`levenshtein_within`] | edit distance (optionally bounded) | `strsim::levenshtein` |
//! | [`osa_distance`] | edit distance with adjacent swaps | `strsim::osa_distance` |
//! | [`soundex`] | American Soundex code | `rphonetic` on ASCII input |
//! | [`soundex_of_value`] | the code of a standardized value (folded first) | the one blocking and comparison use |
//!
//! All comparators work on Unicode scalar values (`char`s), as strsim does, with a byte
//! fast path when both strings are ASCII and word-level bit parallelism when the pattern side
//! has at most 64 characters; longer strings fall back to plain loops.

mod edit;
mod jaro;
mod masks;
mod soundex;

pub use edit::{levenshtein, levenshtein_within, osa_distance};
pub use jaro::{
    jaro, jaro_winkler, JaroCorpus, JaroMatcher, WINKLER_BOOST_THRESHOLD, WINKLER_MAX_PREFIX,
    WINKLER_PREFIX_SCALE,
};
pub use soundex::{soundex, soundex_of_value};
