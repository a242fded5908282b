//! Jaro and Jaro–Winkler similarity.
//!
//! In: two strings, compared as sequences of Unicode scalar values (`char`s).
//! Out: a similarity in `[0, 1]`, 1 for equal strings.
//!
//! Definition (Jaro 1989; Winkler 1990; docs/methods.md §5):
//! * match window `d = floor(max(|a|, |b|) / 2) − 1` (0 when that is negative);
//! * each character of `a`, left to right, matches the first not yet matched equal
//!   character of `b` at distance at most `d`; `m` is the number of matches;
//! * `t` is half the number of positions where the matched characters of `a` and of
//!   `b`, each taken in order, differ;
//! * `J = (m/|a| + m/|b| + (m − t)/m) / 3`, and `J = 0` when `m = 0`;
//! * `JW = J + ℓ·p·(1 − J)` with `p = 0.1` and `ℓ` the common prefix length capped at
//!   4, applied only when `J > 0.7`.
//!
//! This is exactly what strsim 0.11, jellyfish 1.x and rapidfuzz 3.x compute by default
//! (docs/check-values.md §1), and the results here are bit-for-bit those of `strsim::jaro` and
//! `strsim::jaro_winkler`: the same greedy matching, the same floating-point expression.
//! Winkler's Census `strcmp95` extras (credit for "similar" characters, the long-string
//! adjustment) are not applied, which is why some values printed in Winkler's tables are
//! not reproduced (see the tests).
//!
//! Two empty strings are equal, so their similarity is 1 (as strsim and rapidfuzz; jellyfish
//! says 0). One empty string against a non-empty one gives 0. The engine treats missing values
//! as "missing" before it ever calls a comparator, so the choice only matters to direct callers.
//!
//! Characters are compared as they are: normalise (NFC or the matching key of the
//! standardize stage) first, or "Müller" in NFC and NFD will differ.
//!
//! # How it is fast
//!
//! The greedy matching is symmetric (the same positions are matched whichever string drives
//! it; the property tests compare both argument orders with strsim bit for bit), so the
//! shorter string becomes the *pattern*. When it has at most 64 characters, one
//! `u64` per distinct character records where it occurs; the window is a sliding bit mask and
//! "first unmatched equal character in the window" is the lowest set bit of
//! `mask[c] & window & !used`. All-ASCII pairs work on bytes with a 128-entry table; other
//! pairs decode `char`s once. When both strings are longer than 64 characters a plain loop
//! over the window is used. The three ratios of the formula come from a table filled at
//! compile time (same bits as dividing). [`JaroMatcher`] keeps the pattern masks of one query
//! string for one-against-many comparison.

use super::masks::{is_ascii, low_bits, with_ascii_masks, CharMasks, MAX_BITS};

/// Winkler's prefix scale `p` (Winkler 1990; the default of strsim, jellyfish, rapidfuzz).
pub const WINKLER_PREFIX_SCALE: f64 = 0.1;
/// Longest common prefix that earns the Winkler boost.
pub const WINKLER_MAX_PREFIX: usize = 4;
/// The Winkler boost is applied only when the Jaro similarity is strictly above this.
pub const WINKLER_BOOST_THRESHOLD: f64 = 0.7;

/// Jaro similarity of `a` and `b`, in `[0, 1]`.
///
/// ```
/// use samekey::compare::strings::jaro;
/// assert!((jaro("MARTHA", "MARHTA") - 0.944444).abs() < 1e-6);
/// ```
pub fn jaro(a: &str, b: &str) -> f64 {
    if is_ascii(a) && is_ascii(b) {
        let (a, b) = (a.as_bytes(), b.as_bytes());
        let (p, t) = if a.len() <= b.len() { (a, b) } else { (b, a) };
        if p.len() <= MAX_BITS {
            return with_ascii_masks(p, |masks| {
                jaro_bits(
                    p,
                    |c| masks[usize::from(c & 0x7f)],
                    t.iter().copied(),
                    t.len(),
                )
            });
        }
        return jaro_general(a, b);
    }
    let (la, lb) = (a.chars().count(), b.chars().count());
    let (p, p_len, t, t_len) = if la <= lb {
        (a, la, b, lb)
    } else {
        (b, lb, a, la)
    };
    if p_len <= MAX_BITS {
        let mut buf = ['\0'; MAX_BITS];
        for (slot, c) in buf.iter_mut().zip(p.chars()) {
            *slot = c;
        }
        let p = &buf[..p_len];
        let masks = CharMasks::new(p);
        return jaro_bits(p, |c| masks.get(c), t.chars(), t_len);
    }
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    jaro_general(&a, &b)
}

/// Jaro–Winkler similarity of `a` and `b`, in `[0, 1]`: prefix scale 0.1, prefix of at most
/// 4 characters, boost only when the Jaro similarity exceeds 0.7.
///
/// ```
/// use samekey::compare::strings::jaro_winkler;
/// assert!((jaro_winkler("MARTHA", "MARHTA") - 0.961111).abs() < 1e-6);
/// ```
pub fn jaro_winkler(a: &str, b: &str) -> f64 {
    winkler(jaro(a, b), || common_prefix(a, b))
}

/// Apply the Winkler prefix boost to a Jaro similarity `sim`.
///
/// The expression is written exactly as strsim writes it so results agree to the last bit.
#[inline]
fn winkler(sim: f64, prefix: impl FnOnce() -> usize) -> f64 {
    if sim > WINKLER_BOOST_THRESHOLD {
        let l = prefix();
        sim + WINKLER_PREFIX_SCALE * l as f64 * (1.0 - sim)
    } else {
        sim
    }
}

/// Length of the common prefix of `a` and `b` in characters, at most [`WINKLER_MAX_PREFIX`].
#[inline]
fn common_prefix(a: &str, b: &str) -> usize {
    a.chars()
        .zip(b.chars())
        .take(WINKLER_MAX_PREFIX)
        .take_while(|(x, y)| x == y)
        .count()
}

/// `RATIO[n][d] = n / d` for `n, d <= 64`, evaluated at compile time. Basic IEEE-754
/// arithmetic is correctly rounded both at compile time and at run time, so a lookup gives
/// the very bits a division would, without the division's latency (three per pair).
static RATIO: [[f64; MAX_BITS + 1]; MAX_BITS + 1] = {
    let mut table = [[0.0; MAX_BITS + 1]; MAX_BITS + 1];
    let mut n = 0;
    while n <= MAX_BITS {
        let mut d = 1;
        while d <= MAX_BITS {
            table[n][d] = n as f64 / d as f64;
            d += 1;
        }
        n += 1;
    }
    table
};

/// `n / d` as `f64`, from [`RATIO`] when both are at most 64 (`d > 0`).
#[inline(always)]
fn ratio(n: usize, d: usize) -> f64 {
    if n <= MAX_BITS && d <= MAX_BITS {
        RATIO[n][d]
    } else {
        n as f64 / d as f64
    }
}

/// The Jaro formula from match and half-transposition counts, as strsim evaluates it.
#[inline]
fn formula(m: usize, half_transpositions: usize, la: usize, lb: usize) -> f64 {
    if m == 0 {
        return 0.0;
    }
    let t = half_transpositions / 2;
    (ratio(m, la) + ratio(m, lb) + ratio(m - t, m)) / 3.0
}

/// Bit-parallel Jaro: `pattern` (at most 64 symbols) is described by `masks`; `text`
/// (any length, `text_len` symbols) is streamed once.
#[inline(always)]
fn jaro_bits<T, M, I>(pattern: &[T], masks: M, text: I, text_len: usize) -> f64
where
    T: Copy + PartialEq + Default,
    M: Fn(T) -> u64,
    I: Iterator<Item = T>,
{
    let p_len = pattern.len();
    if p_len == 0 || text_len == 0 {
        return if p_len == 0 && text_len == 0 {
            1.0
        } else {
            0.0
        };
    }
    let d = (p_len.max(text_len) / 2).saturating_sub(1);
    // Pattern positions a text position i may match: [i - d, i + d].
    let mut window = low_bits(d + 1);
    let mut used = 0u64;
    // Matched text symbols in text order; at most one per pattern position.
    let mut matched = [T::default(); MAX_BITS];
    let mut m = 0usize;
    // From text position p_len + d on, the window lies above the pattern.
    let stop = p_len + d;
    for (i, c) in text.take(stop).enumerate() {
        let candidates = masks(c) & window & !used;
        // Branch-free: whether a symbol matches is unpredictable for real names.
        let lowest = candidates & candidates.wrapping_neg();
        used |= lowest;
        matched[m & (MAX_BITS - 1)] = c;
        m += usize::from(lowest != 0);
        if m == p_len {
            // Every pattern position is taken (and `matched` is full).
            break;
        }
        // The window's lower edge starts moving once i reaches d.
        window = (window << 1) | u64::from(i < d);
    }
    let mut half = 0usize;
    let mut rest = used;
    for &c in &matched[..m] {
        let j = rest.trailing_zeros() as usize;
        rest &= rest - 1;
        half += usize::from(pattern[j] != c);
    }
    formula(m, half, p_len, text_len)
}

/// Plain Jaro for strings too long for one word of position bits.
fn jaro_general<T: Copy + PartialEq>(a: &[T], b: &[T]) -> f64 {
    let (la, lb) = (a.len(), b.len());
    if la == 0 || lb == 0 {
        return if la == 0 && lb == 0 { 1.0 } else { 0.0 };
    }
    let d = (la.max(lb) / 2).saturating_sub(1);
    let mut a_used = vec![false; la];
    let mut b_used = vec![false; lb];
    let mut m = 0usize;
    for (i, &x) in a.iter().enumerate() {
        let lo = i.saturating_sub(d);
        let hi = (i + d + 1).min(lb);
        if lo >= hi {
            break;
        }
        for j in lo..hi {
            if !b_used[j] && b[j] == x {
                b_used[j] = true;
                a_used[i] = true;
                m += 1;
                break;
            }
        }
    }
    let mut b_matched = b.iter().zip(&b_used).filter(|(_, &u)| u).map(|(&y, _)| y);
    let mut half = 0usize;
    for (&x, _) in a.iter().zip(&a_used).filter(|(_, &u)| u) {
        if let Some(y) = b_matched.next() {
            half += usize::from(x != y);
        }
    }
    formula(m, half, la, lb)
}

/// One query string prepared for comparison against many others.
///
/// Building it costs about one comparison; afterwards each [`JaroMatcher::jaro`] or
/// [`JaroMatcher::jaro_winkler`] call skips the pattern set-up. Results are identical to the
/// free functions [`jaro`] and [`jaro_winkler`] with the query as first argument.
///
/// ```
/// use samekey::compare::strings::{jaro_winkler, JaroMatcher};
/// let q = JaroMatcher::new("DWAYNE");
/// for name in ["DUANE", "DWAYNE", "DEWAYNE"] {
///     assert_eq!(q.jaro_winkler(name), jaro_winkler("DWAYNE", name));
/// }
/// ```
#[derive(Clone)]
pub struct JaroMatcher {
    query: String,
    chars: Vec<char>,
    /// The query is all ASCII, so all-ASCII candidates can be compared as bytes.
    ascii: bool,
    /// Pattern masks of the query; `None` when it is longer than 64 characters.
    masks: Option<CharMasks>,
}

impl std::fmt::Debug for JaroMatcher {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("JaroMatcher")
            .field("query", &self.query)
            .finish_non_exhaustive()
    }
}

impl JaroMatcher {
    /// Prepare `query` for one-against-many comparison.
    pub fn new(query: &str) -> Self {
        let chars: Vec<char> = query.chars().collect();
        let masks = (chars.len() <= MAX_BITS).then(|| CharMasks::new(&chars));
        JaroMatcher {
            query: query.to_owned(),
            chars,
            ascii: is_ascii(query),
            masks,
        }
    }

    /// The query string.
    pub fn query(&self) -> &str {
        &self.query
    }

    /// Jaro similarity of the query and `text`; equals `jaro(query, text)`.
    pub fn jaro(&self, text: &str) -> f64 {
        let Some(masks) = &self.masks else {
            return jaro(&self.query, text);
        };
        if self.ascii && is_ascii(text) {
            let t = text.as_bytes();
            jaro_bits(
                self.query.as_bytes(),
                |c| masks.get_ascii(c),
                t.iter().copied(),
                t.len(),
            )
        } else {
            jaro_bits(
                &self.chars,
                |c| masks.get(c),
                text.chars(),
                text.chars().count(),
            )
        }
    }

    /// Jaro–Winkler similarity of the query and `text`; equals `jaro_winkler(query, text)`.
    pub fn jaro_winkler(&self, text: &str) -> f64 {
        winkler(self.jaro(text), || {
            self.chars
                .iter()
                .zip(text.chars())
                .take(WINKLER_MAX_PREFIX)
                .take_while(|(x, y)| **x == *y)
                .count()
        })
    }
}

/// Texts scored side by side by the batch kernel: independent texts give the processor
/// independent chains of work (the matching loop of one pair is one long dependency chain).
const LANES: usize = 2;

/// Jaro of an all-ASCII `pattern` (at most 64 bytes, described by `table`, whose upper half
/// is zero; `padded` is the pattern followed by zeros) against `LANES` all-ASCII texts at once, followed by the Winkler boost. Each lane
/// runs the same steps as [`jaro_bits`] (and gives the same bits): first all lanes together
/// for as many steps as the shortest needs, then each lane alone for the rest.
// The lanes' state lives in parallel arrays stepped in lockstep; indexing reads best.
#[allow(clippy::needless_range_loop)]
#[inline(always)]
fn jaro_winkler_ascii_lanes(
    pattern: &[u8],
    padded: &[u8; MAX_BITS],
    table: &[u64; 256],
    texts: [&[u8]; LANES],
) -> [f64; LANES] {
    let p_len = pattern.len();
    let mut d = [0usize; LANES];
    let mut stop = [0usize; LANES];
    let mut window = [0u64; LANES];
    let mut used = [0u64; LANES];
    let mut m = [0usize; LANES];
    // At most 64 matches; 128 slots let `m & 127` index without a check.
    let mut matched = [[0u8; 2 * MAX_BITS]; LANES];
    for k in 0..LANES {
        let t_len = texts[k].len();
        d[k] = (p_len.max(t_len) / 2).saturating_sub(1);
        stop[k] = (p_len + d[k]).min(t_len);
        window[k] = low_bits(d[k] + 1);
    }
    let common = stop.iter().copied().min().unwrap_or(0);
    let heads: [&[u8]; LANES] = std::array::from_fn(|k| &texts[k][..common]);
    macro_rules! step {
        ($k:expr, $i:expr, $c:expr) => {{
            let (k, i, c) = ($k, $i, $c);
            let candidates = table[usize::from(c)] & window[k] & !used[k];
            // Branch-free: whether a symbol matches is unpredictable for real names.
            let lowest = candidates & candidates.wrapping_neg();
            used[k] |= lowest;
            matched[k][m[k] & (2 * MAX_BITS - 1)] = c;
            m[k] += usize::from(lowest != 0);
            window[k] = (window[k] << 1) | u64::from(i < d[k]);
        }};
    }
    for i in 0..common {
        for k in 0..LANES {
            step!(k, i, heads[k][i]);
        }
    }
    for k in 0..LANES {
        for (i, &c) in texts[k].iter().enumerate().take(stop[k]).skip(common) {
            step!(k, i, c);
        }
    }
    let mut out = [0.0; LANES];
    for k in 0..LANES {
        let text = texts[k];
        let t_len = text.len();
        let sim = if p_len == 0 || t_len == 0 {
            if p_len == 0 && t_len == 0 {
                1.0
            } else {
                0.0
            }
        } else {
            // As many steps as the pattern is long, not `m`: the count is then the same for
            // every text of a batch and the loop's end is predicted. Steps past `m` add 0.
            let mut half = 0usize;
            let mut rest = used[k];
            for &c in matched[k].iter().take(p_len) {
                let j = rest.trailing_zeros() as usize & (MAX_BITS - 1);
                let live = rest != 0;
                rest &= rest.wrapping_sub(1);
                half += usize::from(live & (padded[j] != c));
            }
            formula(m[k], half, p_len, t_len)
        };
        out[k] = winkler(sim, || {
            // Common prefix without an early exit (its length is unpredictable).
            let n = p_len.min(t_len).min(WINKLER_MAX_PREFIX);
            let mut run = true;
            let mut prefix = 0;
            for x in 0..WINKLER_MAX_PREFIX {
                run &= (x < n) & (padded[x] == text.get(x).copied().unwrap_or(0));
                prefix += usize::from(run);
            }
            prefix
        });
    }
    out
}

/// Many strings prepared once for comparison against many queries, as in an all-against-all
/// score matrix: the bytes of all texts in one buffer, with each text's place and whether it
/// is all ASCII, so that [`JaroMatcher::jaro_winkler_corpus`] does no per-pair checks.
///
/// ```
/// use samekey::compare::strings::{jaro_winkler, JaroCorpus, JaroMatcher};
/// let names = ["DUANE", "DWAYNE", "DEWAYNE", "MÜLLER"];
/// let corpus = JaroCorpus::new(names);
/// let mut scores = vec![0.0; corpus.len()];
/// JaroMatcher::new("DWAYNE").jaro_winkler_corpus(&corpus, &mut scores);
/// for (name, score) in names.iter().zip(&scores) {
///     assert_eq!(*score, jaro_winkler("DWAYNE", name));
/// }
/// ```
#[derive(Clone, Debug, Default)]
pub struct JaroCorpus {
    /// All texts, one after the other.
    text: String,
    /// Byte range of each text in `text`.
    spans: Vec<(usize, usize)>,
    /// Each text with one byte per `char`: ASCII characters as they are, any other as
    /// [`NOT_ASCII`]. An all-ASCII query matches, and shares a prefix with, the very same
    /// positions of this form as of the text itself, so it gets the same score from it.
    folded: Vec<u8>,
    /// Byte range of each text in `folded`.
    folded_spans: Vec<(usize, usize)>,
    /// Text indices by folded length, so that texts scored side by side take about the same
    /// number of steps.
    by_length: Vec<usize>,
}

/// Stands for any non-ASCII character in [`JaroCorpus`]'s folded texts; equal to no ASCII
/// byte, and its entry in the kernel's byte table is zero.
const NOT_ASCII: u8 = 0x80;

impl JaroCorpus {
    /// Prepare `texts` (in order; text `i` gets score `i`).
    pub fn new<I, S>(texts: I) -> Self
    where
        I: IntoIterator<Item = S>,
        S: AsRef<str>,
    {
        let mut corpus = JaroCorpus::default();
        for t in texts {
            let t = t.as_ref();
            let start = corpus.text.len();
            corpus.text.push_str(t);
            corpus.spans.push((start, corpus.text.len()));
            let start = corpus.folded.len();
            if is_ascii(t) {
                corpus.folded.extend_from_slice(t.as_bytes());
            } else {
                let fold = |c: char| {
                    u8::try_from(c)
                        .ok()
                        .filter(u8::is_ascii)
                        .unwrap_or(NOT_ASCII)
                };
                corpus.folded.extend(t.chars().map(fold));
            }
            corpus.folded_spans.push((start, corpus.folded.len()));
        }
        corpus.by_length = (0..corpus.len()).collect();
        corpus
            .by_length
            .sort_by_key(|&i| corpus.folded_spans[i].1 - corpus.folded_spans[i].0);
        corpus
    }

    /// Number of texts.
    pub fn len(&self) -> usize {
        self.spans.len()
    }

    /// Whether there are no texts.
    pub fn is_empty(&self) -> bool {
        self.spans.is_empty()
    }

    /// Text `i`, or `None` past the end.
    pub fn get(&self, i: usize) -> Option<&str> {
        let &(a, b) = self.spans.get(i)?;
        self.text.get(a..b)
    }
}

impl JaroMatcher {
    /// The query's pattern table indexed by any byte (zero above 127), when the all-ASCII
    /// byte kernel applies to the query.
    fn byte_table(&self) -> Option<[u64; 256]> {
        match &self.masks {
            Some(masks) if self.ascii => {
                let mut table = [0u64; 256];
                table[..128].copy_from_slice(masks.ascii_table());
                Some(table)
            }
            _ => None,
        }
    }

    /// Jaro–Winkler similarity of the query and each of `texts`: `out[i]` becomes
    /// `self.jaro_winkler(texts[i])`, bit for bit. Scores the first
    /// `min(texts.len(), out.len())` texts; further elements of `out` are left as they are.
    ///
    /// Quicker than calling [`JaroMatcher::jaro_winkler`] in a loop: all-ASCII texts are
    /// scored several at a time against an all-ASCII query of at most 64 characters.
    pub fn jaro_winkler_many(&self, texts: &[&str], out: &mut [f64]) {
        let n = texts.len().min(out.len());
        let (texts, out) = (&texts[..n], &mut out[..n]);
        let Some(table) = self.byte_table() else {
            for (o, t) in out.iter_mut().zip(texts) {
                *o = self.jaro_winkler(t);
            }
            return;
        };
        let pattern = self.query.as_bytes();
        let mut padded = [0u8; MAX_BITS];
        for (slot, &b) in padded.iter_mut().zip(pattern) {
            *slot = b;
        }
        let mut t_chunks = texts.chunks_exact(LANES);
        let mut o_chunks = out.chunks_exact_mut(LANES);
        for (ts, os) in (&mut t_chunks).zip(&mut o_chunks) {
            if ts.iter().all(|t| is_ascii(t)) {
                let lanes = std::array::from_fn(|k| ts[k].as_bytes());
                os.copy_from_slice(&jaro_winkler_ascii_lanes(pattern, &padded, &table, lanes));
            } else {
                for (o, t) in os.iter_mut().zip(ts) {
                    *o = self.jaro_winkler(t);
                }
            }
        }
        for (o, t) in o_chunks
            .into_remainder()
            .iter_mut()
            .zip(t_chunks.remainder())
        {
            *o = self.jaro_winkler(t);
        }
    }

    /// Jaro–Winkler similarity of the query and each text of `corpus`: `out[i]` becomes
    /// `self.jaro_winkler(corpus.get(i))`, bit for bit. Scores the first
    /// `min(corpus.len(), out.len())` texts; further elements of `out` are left as they are.
    ///
    /// The quickest way to fill an all-against-all score matrix: the texts were checked and
    /// folded to bytes when the corpus was built, and an all-ASCII query of at most 64
    /// characters scores them several at a time, whatever characters they hold.
    pub fn jaro_winkler_corpus(&self, corpus: &JaroCorpus, out: &mut [f64]) {
        let n = corpus.len().min(out.len());
        let bytes = corpus.folded.as_slice();
        let slow = |i: usize| self.jaro_winkler(corpus.get(i).unwrap_or_default());
        let Some(table) = self.byte_table() else {
            for (i, o) in out[..n].iter_mut().enumerate() {
                *o = slow(i);
            }
            return;
        };
        let pattern = self.query.as_bytes();
        let mut padded = [0u8; MAX_BITS];
        for (slot, &b) in padded.iter_mut().zip(pattern) {
            *slot = b;
        }
        let out = &mut out[..n];
        let mut lanes: [&[u8]; LANES] = [&[]; LANES];
        let mut slots = [0usize; LANES];
        let mut filled = 0;
        for &i in corpus.by_length.iter().filter(|&&i| i < n) {
            let (a, b) = corpus.folded_spans[i];
            lanes[filled] = bytes.get(a..b).unwrap_or_default();
            slots[filled] = i;
            filled += 1;
            if filled == LANES {
                let scores = jaro_winkler_ascii_lanes(pattern, &padded, &table, lanes);
                for (k, s) in scores.into_iter().enumerate() {
                    out[slots[k]] = s;
                }
                filled = 0;
            }
        }
        for k in 0..filled {
            out[slots[k]] = slow(slots[k]);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// Jaro and Jaro–Winkler as computed by jellyfish 1.3.0 and rapidfuzz 3.14.6 (identical
    /// to 6 decimals on every row), transcribed from docs/check-values.md §1. The last column names
    /// the published source of the pair itself: hand = classic worked example re-derived
    /// from the definition; W94 = Winkler 1994, RR94/05, Table 2.1; W93 = Winkler 1993,
    /// RR93/08, Table 5 (both as transcribed in NLTK 3.10.4); edge = edge case, computed only.
    const LIBRARY_ROWS: &[(&str, &str, f64, f64, &str)] = &[
        ("MARTHA", "MARHTA", 0.944444, 0.961111, "hand"),
        ("DWAYNE", "DUANE", 0.822222, 0.840000, "hand"),
        ("DIXON", "DICKSONX", 0.766667, 0.813333, "hand"),
        ("JELLYFISH", "SMELLYFISH", 0.896296, 0.896296, "hand"),
        ("SHACKLEFORD", "SHACKELFORD", 0.969697, 0.981818, "W94"),
        ("DUNNINGHAM", "CUNNIGHAM", 0.896296, 0.896296, "W94"),
        ("NICHLESON", "NICHULSON", 0.925926, 0.955556, "W94"),
        ("JONES", "JOHNSON", 0.790476, 0.832381, "W94"),
        ("MASSEY", "MASSIE", 0.888889, 0.933333, "W94"),
        ("ABROMS", "ABRAMS", 0.888889, 0.922222, "W94"),
        ("HARDIN", "MARTINEZ", 0.722222, 0.722222, "W94"),
        ("ITMAN", "SMITH", 0.466667, 0.466667, "W94"),
        ("JERALDINE", "GERALDINE", 0.925926, 0.925926, "W94"),
        ("MARHTA", "MARTHA", 0.944444, 0.961111, "W94"),
        ("MICHELLE", "MICHAEL", 0.869048, 0.921429, "W94"),
        ("JULIES", "JULIUS", 0.888889, 0.933333, "W94"),
        ("TANYA", "TONYA", 0.866667, 0.880000, "W94"),
        ("DWAYNE", "DUANE", 0.822222, 0.840000, "W94"),
        ("SEAN", "SUSAN", 0.783333, 0.805000, "W94"),
        ("JON", "JOHN", 0.916667, 0.933333, "W94"),
        ("JON", "JAN", 0.777778, 0.800000, "W94"),
        ("BROOKHAVEN", "BRROKHAVEN", 0.933333, 0.946667, "W94"),
        ("BROOK HALLOW", "BROOK HLLW", 0.944444, 0.966667, "W94"),
        ("DECATUR", "DECATIR", 0.904762, 0.942857, "W94"),
        ("FITZRUREITER", "FITZENREITER", 0.855556, 0.913333, "W94"),
        ("HIGBEE", "HIGHEE", 0.888889, 0.922222, "W94"),
        ("HIGBEE", "HIGVEE", 0.888889, 0.922222, "W94"),
        ("LACURA", "LOCURA", 0.888889, 0.900000, "W94"),
        ("IOWA", "IONA", 0.833333, 0.866667, "W94"),
        ("1ST", "IST", 0.777778, 0.777778, "W94"),
        ("billy", "billy", 1.000000, 1.000000, "W93"),
        ("billy", "bill", 0.933333, 0.960000, "W93"),
        ("billy", "blily", 0.933333, 0.940000, "W93"),
        ("massie", "massey", 0.888889, 0.933333, "W93"),
        ("yvette", "yevett", 0.888889, 0.900000, "W93"),
        ("billy", "bolly", 0.866667, 0.880000, "W93"),
        ("dwayne", "duane", 0.822222, 0.840000, "W93"),
        ("dixon", "dickson", 0.790476, 0.832381, "W93"),
        ("billy", "susan", 0.000000, 0.000000, "W93"),
        // Empty pair: rapidfuzz 3.14.6 (and strsim 0.11.1) give 1.0, jellyfish 1.3.0 gives 0.0;
        // we follow rapidfuzz/strsim (see the module docs).
        ("", "", 1.000000, 1.000000, "edge"),
        ("A", "", 0.000000, 0.000000, "edge"),
        ("AB", "BA", 0.000000, 0.000000, "edge"),
        ("ABCD", "ABXY", 0.666667, 0.666667, "edge"),
        ("PREFIXAAAA", "PREFIXBBBB", 0.733333, 0.840000, "edge"),
    ];

    /// Values printed in the publications (3 decimals) that the plain formula reproduces,
    /// i.e. the rows where the published value and the formula agree (docs/check-values.md §1).
    /// (s1, s2, published Jaro, published JW or NaN when that column is not reproducible, source)
    const PUBLISHED_ROWS: &[(&str, &str, f64, f64, &str)] = &[
        ("MARTHA", "MARHTA", 0.944, 0.961, "hand"),
        ("DWAYNE", "DUANE", 0.822, 0.840, "hand"),
        ("DIXON", "DICKSONX", 0.767, 0.813, "hand"),
        ("JELLYFISH", "SMELLYFISH", 0.896, 0.896, "hand"),
        ("SHACKLEFORD", "SHACKELFORD", 0.970, 0.982, "W94"),
        ("DUNNINGHAM", "CUNNIGHAM", 0.896, 0.896, "W94"),
        ("NICHLESON", "NICHULSON", 0.926, 0.956, "W94"),
        ("JONES", "JOHNSON", 0.790, 0.832, "W94"),
        ("MASSEY", "MASSIE", 0.889, f64::NAN, "W94"), // published JW 0.944 not reproducible
        ("ABROMS", "ABRAMS", 0.889, 0.922, "W94"),
        ("HARDIN", "MARTINEZ", 0.722, 0.722, "W94"),
        ("ITMAN", "SMITH", 0.467, 0.467, "W94"),
        ("JERALDINE", "GERALDINE", 0.926, 0.926, "W94"),
        ("MARHTA", "MARTHA", 0.944, 0.961, "W94"),
        ("MICHELLE", "MICHAEL", 0.869, 0.921, "W94"),
        ("JULIES", "JULIUS", 0.889, 0.933, "W94"),
        ("TANYA", "TONYA", 0.867, 0.880, "W94"),
        ("DWAYNE", "DUANE", 0.822, f64::NAN, "W94"), // published JW 0.858 not reproducible
        ("SEAN", "SUSAN", 0.783, 0.805, "W94"),
        ("JON", "JOHN", 0.917, 0.933, "W94"),
        ("BROOKHAVEN", "BRROKHAVEN", 0.933, 0.947, "W94"),
        ("BROOK HALLOW", "BROOK HLLW", 0.944, 0.967, "W94"),
        ("DECATUR", "DECATIR", 0.905, 0.943, "W94"),
        ("FITZRUREITER", "FITZENREITER", 0.856, 0.913, "W94"),
        ("HIGBEE", "HIGHEE", 0.889, 0.922, "W94"),
        ("HIGBEE", "HIGVEE", 0.889, 0.922, "W94"),
        ("LACURA", "LOCURA", 0.889, 0.900, "W94"),
        ("IOWA", "IONA", 0.833, 0.867, "W94"),
        ("billy", "billy", 1.000, 1.000, "W93"),
        ("billy", "bill", 0.933, f64::NAN, "W93"), // published JW 0.967
        ("billy", "blily", 0.933, f64::NAN, "W93"), // published JW 0.947
        ("massie", "massey", 0.889, f64::NAN, "W93"), // published JW 0.944
        ("yvette", "yevett", 0.889, f64::NAN, "W93"), // published JW 0.911
        ("billy", "bolly", 0.867, f64::NAN, "W93"), // published JW 0.893
        ("dwayne", "duane", 0.822, f64::NAN, "W93"), // published JW 0.858
        ("dixon", "dickson", 0.790, f64::NAN, "W93"), // published JW 0.853
        ("billy", "susan", 0.000, 0.000, "W93"),
    ];

    /// Published values the formula does not give (docs/check-values.md §1 lists them). Winkler's
    /// Census comparator added the strcmp95 extras, and JON/JAN, 1ST/IST are printed as 0
    /// though the definition gives 0.778. We pin the formula value and that it differs.
    /// (s1, s2, published value, which column, source)
    const NOT_REPRODUCED: &[(&str, &str, f64, &str, &str)] = &[
        ("MASSEY", "MASSIE", 0.944, "jw", "W94"),
        ("DWAYNE", "DUANE", 0.858, "jw", "W94"),
        ("JON", "JAN", 0.000, "jaro", "W94"),
        ("JON", "JAN", 0.000, "jw", "W94"),
        ("1ST", "IST", 0.000, "jaro", "W94"),
        ("1ST", "IST", 0.000, "jw", "W94"),
        ("billy", "bill", 0.967, "jw", "W93"),
        ("billy", "blily", 0.947, "jw", "W93"),
        ("massie", "massey", 0.944, "jw", "W93"),
        ("yvette", "yevett", 0.911, "jw", "W93"),
        ("billy", "bolly", 0.893, "jw", "W93"),
        ("dwayne", "duane", 0.858, "jw", "W93"),
        ("dixon", "dickson", 0.853, "jw", "W93"),
    ];

    #[test]
    fn library_values() {
        for &(a, b, j, jw, src) in LIBRARY_ROWS {
            let matcher = JaroMatcher::new(a);
            for (name, got, want) in [
                ("jaro", jaro(a, b), j),
                ("jaro_winkler", jaro_winkler(a, b), jw),
                ("jaro reversed", jaro(b, a), j),
                ("jaro_winkler reversed", jaro_winkler(b, a), jw),
                ("matcher jaro", matcher.jaro(b), j),
                ("matcher jaro_winkler", matcher.jaro_winkler(b), jw),
            ] {
                assert!(
                    (got - want).abs() < 5e-7,
                    "{name}({a:?}, {b:?}) = {got}, want {want} (jellyfish/rapidfuzz; {src})"
                );
            }
        }
    }

    #[test]
    fn published_values() {
        for &(a, b, j, jw, src) in PUBLISHED_ROWS {
            let got = jaro(a, b);
            assert!(
                (got - j).abs() <= 5e-4,
                "jaro({a}, {b}) = {got}, {src} prints {j}"
            );
            if !jw.is_nan() {
                let got = jaro_winkler(a, b);
                assert!(
                    (got - jw).abs() <= 5e-4,
                    "jw({a}, {b}) = {got}, {src} prints {jw}"
                );
            }
        }
    }

    #[test]
    fn published_values_not_reproduced_by_the_formula() {
        for &(a, b, published, col, src) in NOT_REPRODUCED {
            let got = if col == "jw" {
                jaro_winkler(a, b)
            } else {
                jaro(a, b)
            };
            let formula = LIBRARY_ROWS.iter().find(|r| r.0 == a && r.1 == b).map(|r| {
                if col == "jw" {
                    r.3
                } else {
                    r.2
                }
            });
            let Some(formula) = formula else {
                panic!("{a}/{b} missing from LIBRARY_ROWS");
            };
            assert!((got - formula).abs() < 5e-7, "{col}({a}, {b}) = {got}");
            assert!(
                (got - published).abs() > 5e-3,
                "{col}({a}, {b}) = {got} now matches {src}'s {published}; revisit the docs"
            );
        }
    }

    #[test]
    fn unicode_normalisation_matters() {
        // rapidfuzz 3.14.6 (docs/check-values.md §1): JW('Müller' NFC, 'Müller' NFD) = 0.864286.
        let nfc = "M\u{fc}ller";
        let nfd = "Mu\u{308}ller";
        assert!((jaro_winkler(nfc, nfd) - 0.864286).abs() < 5e-7);
        assert!((JaroMatcher::new(nfc).jaro_winkler(nfd) - 0.864286).abs() < 5e-7);
        assert_eq!(jaro_winkler(nfc, nfc), 1.0);
    }

    #[test]
    fn winkler_constants() {
        // Winkler 1990 / docs/methods.md §5: p = 0.1, prefix ≤ 4, boost only above 0.7.
        assert_eq!(WINKLER_PREFIX_SCALE, 0.1);
        assert_eq!(WINKLER_MAX_PREFIX, 4);
        assert_eq!(WINKLER_BOOST_THRESHOLD, 0.7);
        // A 5-character common prefix still earns only 4 × 0.1.
        let j = jaro("ABCDEFGH", "ABCDEXYZ");
        let jw = jaro_winkler("ABCDEFGH", "ABCDEXYZ");
        assert!(j > 0.7);
        assert!((jw - (j + 0.4 * (1.0 - j))).abs() < 1e-15);
        // No boost at or below 0.7 (ABCD/ABXY: 0.666667 with a prefix of 2, edge row above).
        assert_eq!(jaro_winkler("ABCD", "ABXY"), jaro("ABCD", "ABXY"));
    }

    #[test]
    fn long_strings_take_the_general_path() {
        let a = "ANDERSONVILLE ".repeat(6);
        let b = "ANDERSENVILLE ".repeat(6);
        assert!(a.len() > 64 && b.len() > 64);
        assert_eq!(jaro(&a, &b), strsim::jaro(&a, &b));
        assert_eq!(jaro_winkler(&a, &b), strsim::jaro_winkler(&a, &b));
        let matcher = JaroMatcher::new(&a);
        assert_eq!(matcher.jaro(&b), jaro(&a, &b));
        // One long, one short: the short side is the pattern.
        assert_eq!(jaro("ANDERSEN", &a), strsim::jaro("ANDERSEN", &a));
        assert_eq!(
            JaroMatcher::new("ANDERSEN").jaro(&a),
            strsim::jaro("ANDERSEN", &a)
        );
    }

    #[test]
    fn pattern_of_exactly_64_chars() {
        let a: String = (0..64)
            .map(|i| (b'A' + (i * 7 % 26) as u8) as char)
            .collect();
        let b: String = a.chars().rev().collect();
        assert_eq!(jaro(&a, &b), strsim::jaro(&a, &b));
        let a_wide = a.replace('A', "Ä");
        let b_wide = b.replace('A', "Ä");
        assert_eq!(jaro(&a_wide, &b_wide), strsim::jaro(&a_wide, &b_wide));
        assert_eq!(
            JaroMatcher::new(&a_wide).jaro(&b_wide),
            strsim::jaro(&a_wide, &b_wide)
        );
    }

    #[test]
    fn batch_apis_equal_single_calls() {
        // Rows of LIBRARY_ROWS (values from jellyfish/rapidfuzz, see above) scored in batches:
        // every query against every text, ASCII and not, shorter and longer than 64 bytes.
        let long = "ANDERSONVILLE ".repeat(6);
        let mut texts: Vec<&str> = LIBRARY_ROWS.iter().flat_map(|r| [r.0, r.1]).collect();
        texts.extend(["M\u{fc}ller", "Mu\u{308}ller", long.as_str(), ""]);
        let corpus = JaroCorpus::new(&texts);
        assert_eq!(corpus.len(), texts.len());
        assert!(!corpus.is_empty());
        for (i, t) in texts.iter().enumerate() {
            assert_eq!(corpus.get(i), Some(*t));
        }
        assert_eq!(corpus.get(texts.len()), None);
        let mut many = vec![f64::NAN; texts.len()];
        let mut from_corpus = vec![f64::NAN; texts.len()];
        for q in texts.iter().chain([&"PREFIX", &"\u{fc}"]) {
            let m = JaroMatcher::new(q);
            m.jaro_winkler_many(&texts, &mut many);
            m.jaro_winkler_corpus(&corpus, &mut from_corpus);
            for (k, t) in texts.iter().enumerate() {
                let want = strsim::jaro_winkler(q, t);
                assert_eq!(many[k].to_bits(), want.to_bits(), "many {q:?} {t:?}");
                assert_eq!(
                    from_corpus[k].to_bits(),
                    want.to_bits(),
                    "corpus {q:?} {t:?}"
                );
            }
        }
        // Published pair, docs/check-values.md §1 (jellyfish 1.3.0 / rapidfuzz 3.14.6): 0.961111.
        let mut one = [0.0];
        JaroMatcher::new("MARTHA").jaro_winkler_many(&["MARHTA"], &mut one);
        assert!((one[0] - 0.961111).abs() < 5e-7);
    }

    #[test]
    fn corpus_folding_keeps_non_ascii_distinct() {
        // Non-ASCII characters (Latin-1 ones whose code is one byte, and wider ones) become one
        // stand-in byte; an ASCII query must still score them exactly as strsim does.
        let texts = [
            "M\u{dc}LLER",
            "M\u{20ac}LLER",
            "MULLER\u{1f600}",
            "\u{dc}\u{dc}\u{dc}",
            "\u{80}",
        ];
        let corpus = JaroCorpus::new(texts);
        for q in ["MULLER", "MLLER", "\u{7f}", "M"] {
            let mut out = [f64::NAN; 5];
            JaroMatcher::new(q).jaro_winkler_corpus(&corpus, &mut out);
            for (t, s) in texts.iter().zip(out) {
                assert_eq!(
                    s.to_bits(),
                    strsim::jaro_winkler(q, t).to_bits(),
                    "{q:?} {t:?}"
                );
            }
        }
    }

    #[test]
    fn batch_apis_score_only_what_fits() {
        let m = JaroMatcher::new("JON");
        let mut out = [-1.0; 3];
        m.jaro_winkler_many(&["JOHN"], &mut out);
        assert_eq!(out[0], jaro_winkler("JON", "JOHN"));
        assert_eq!(out[1..], [-1.0, -1.0]);
        let corpus = JaroCorpus::new(["JOHN", "JAN", "JONES"]);
        let mut short = [-1.0; 2];
        m.jaro_winkler_corpus(&corpus, &mut short);
        assert_eq!(
            short,
            [jaro_winkler("JON", "JOHN"), jaro_winkler("JON", "JAN")]
        );
        m.jaro_winkler_corpus(&JaroCorpus::default(), &mut out);
        assert_eq!(out[1..], [-1.0, -1.0]);
    }

    /// Short names over a small alphabet, so that repeated letters and transpositions are
    /// frequent; sometimes with non-ASCII letters.
    fn short_name() -> impl Strategy<Value = String> {
        prop_oneof![
            "[ABCDE]{0,12}",
            "[a-zA-Z '\\-]{0,20}",
            "[aeiouäöüßéAÄ]{0,12}",
            "[ab€😀]{0,8}",
        ]
    }

    /// Anything from empty to well past 64 characters.
    fn any_string() -> impl Strategy<Value = String> {
        prop_oneof![
            short_name(),
            "[ABCDE]{60,140}",
            "[abcäöü]{55,100}",
            "\\PC{0,90}",
        ]
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(2000))]

        #[test]
        fn batch_apis_equal_strsim(
            a in any_string(),
            bs in prop::collection::vec(any_string(), 0..12),
        ) {
            let matcher = JaroMatcher::new(&a);
            let texts: Vec<&str> = bs.iter().map(String::as_str).collect();
            let corpus = JaroCorpus::new(&texts);
            let mut many = vec![f64::NAN; texts.len()];
            let mut from_corpus = vec![f64::NAN; texts.len()];
            matcher.jaro_winkler_many(&texts, &mut many);
            matcher.jaro_winkler_corpus(&corpus, &mut from_corpus);
            for (k, b) in texts.iter().enumerate() {
                let want = strsim::jaro_winkler(&a, b).to_bits();
                prop_assert_eq!(many[k].to_bits(), want, "many {:?} {:?}", a, b);
                prop_assert_eq!(from_corpus[k].to_bits(), want, "corpus {:?} {:?}", a, b);
            }
        }

        #[test]
        fn equals_strsim(a in any_string(), b in any_string()) {
            let (j, sj) = (jaro(&a, &b), strsim::jaro(&a, &b));
            prop_assert!((j - sj).abs() <= 1e-12, "jaro {a:?} {b:?}: {j} vs strsim {sj}");
            let (jw, sjw) = (jaro_winkler(&a, &b), strsim::jaro_winkler(&a, &b));
            prop_assert!((jw - sjw).abs() <= 1e-12, "jw {a:?} {b:?}: {jw} vs strsim {sjw}");
            // Stronger than the tolerance: the module docs promise the very same bits.
            prop_assert_eq!(j.to_bits(), sj.to_bits());
            prop_assert_eq!(jw.to_bits(), sjw.to_bits());
        }

        #[test]
        fn short_pairs_equal_strsim(a in short_name(), b in short_name()) {
            prop_assert!((jaro(&a, &b) - strsim::jaro(&a, &b)).abs() <= 1e-12);
            prop_assert!((jaro_winkler(&a, &b) - strsim::jaro_winkler(&a, &b)).abs() <= 1e-12);
        }

        #[test]
        fn symmetric_in_range_and_one_on_identity(a in any_string(), b in any_string()) {
            let (ab, ba) = (jaro_winkler(&a, &b), jaro_winkler(&b, &a));
            prop_assert!((ab - ba).abs() <= 1e-12);
            prop_assert!((jaro(&a, &b) - jaro(&b, &a)).abs() <= 1e-12);
            prop_assert!((0.0..=1.0).contains(&ab));
            prop_assert!((0.0..=1.0).contains(&jaro(&a, &b)));
            prop_assert!(jaro(&a, &b) <= ab + 1e-15);
            prop_assert_eq!(jaro(&a, &a), 1.0);
            prop_assert_eq!(jaro_winkler(&a, &a), 1.0);
        }

        #[test]
        fn matcher_equals_free_functions(a in any_string(), bs in prop::collection::vec(any_string(), 1..6)) {
            let matcher = JaroMatcher::new(&a);
            prop_assert_eq!(matcher.query(), a.as_str());
            for b in &bs {
                prop_assert!((matcher.jaro(b) - jaro(&a, b)).abs() <= 1e-12);
                prop_assert!((matcher.jaro_winkler(b) - jaro_winkler(&a, b)).abs() <= 1e-12);
                prop_assert_eq!(matcher.jaro_winkler(b).to_bits(), jaro_winkler(&a, b).to_bits());
            }
        }
    }
}
