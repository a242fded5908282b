//! Edit distances: Levenshtein and optimal string alignment (OSA).
//!
//! In: two strings, compared as sequences of Unicode scalar values (`char`s).
//! Out: the number of edits that turn one into the other.
//!
//! * Levenshtein (1966): insertions, deletions and substitutions, each costing 1.
//! * OSA ("restricted Damerau–Levenshtein"): also swaps two adjacent characters for 1, but
//!   never edits a substring twice, so `osa_distance("CA", "ABC") = 3` where the true
//!   Damerau–Levenshtein distance is 2 (docs/methods.md §5). OSA is not a metric.
//!
//! Results equal `strsim::levenshtein` and `strsim::osa_distance`.
//!
//! # How it is fast
//!
//! A common prefix and suffix cannot change either distance and is cut first. The longer
//! side, if it has at most 64 characters, else the shorter one, becomes the pattern,
//! described by one `u64` of positions per character, and a column of the
//! dynamic-programming matrix is kept as two words of vertical +1/−1 deltas: Myers (1999,
//! "A fast bit-vector algorithm for approximate string matching based on dynamic
//! programming", JACM 46:395–415) in Hyyrö's formulation for global distance, and Hyyrö
//! (2003, "A bit-vector algorithm for computing Levenshtein and Damerau edit distances",
//! Nordic J. Computing 10:29–39) for the transposition term (references from memory). Each
//! character of the other string then costs about a dozen word operations. All-ASCII pairs
//! work on bytes. When both sides exceed 64 characters a two-row dynamic programme is used.

use super::masks::{is_ascii, with_ascii_masks, CharMasks, MAX_BITS};

/// Levenshtein distance between `a` and `b` (in characters).
///
/// ```
/// use samekey::compare::strings::levenshtein;
/// assert_eq!(levenshtein("kitten", "sitting"), 3);
/// ```
pub fn levenshtein(a: &str, b: &str) -> usize {
    // Without a bound the kernels always return a value; the fallback is never taken.
    drive(&Levenshtein::<false>(usize::MAX), a, b).unwrap_or(usize::MAX)
}

/// Levenshtein distance between `a` and `b` if it is at most `k`, else `None`.
///
/// Gives up early: at once when the lengths differ by more than `k`, and otherwise as soon as
/// the rest of the string cannot bring the distance back within `k`.
///
/// ```
/// use samekey::compare::strings::levenshtein_within;
/// assert_eq!(levenshtein_within("kitten", "sitting", 3), Some(3));
/// assert_eq!(levenshtein_within("kitten", "sitting", 2), None);
/// ```
pub fn levenshtein_within(a: &str, b: &str, k: usize) -> Option<usize> {
    drive(&Levenshtein::<true>(k), a, b)
}

/// Optimal string alignment distance between `a` and `b` (in characters).
///
/// ```
/// use samekey::compare::strings::osa_distance;
/// assert_eq!(osa_distance("ab", "ba"), 1);
/// assert_eq!(osa_distance("CA", "ABC"), 3);
/// ```
pub fn osa_distance(a: &str, b: &str) -> usize {
    // OSA has no bound, so the kernels always return a value.
    drive(&Osa, a, b).unwrap_or(usize::MAX)
}

/// One edit distance, as a bit-parallel kernel and a plain fallback.
trait Distance {
    /// Results above this are reported as `None`.
    fn max(&self) -> usize;
    /// Bit-parallel kernel: pattern of `p_len` symbols (1..=64) described by `masks`,
    /// `text` of `text_len` symbols.
    fn bits<T, M, I>(&self, p_len: usize, masks: M, text: I, text_len: usize) -> Option<usize>
    where
        M: Fn(T) -> u64,
        I: Iterator<Item = T>;
    /// Dynamic programme for when neither side fits in a word.
    fn dp<T: PartialEq>(&self, a: &[T], b: &[T]) -> Option<usize>;
}

/// Levenshtein distance, optionally giving up above the bound.
struct Levenshtein<const BOUNDED: bool>(usize);

impl<const BOUNDED: bool> Distance for Levenshtein<BOUNDED> {
    fn max(&self) -> usize {
        self.0
    }
    #[inline(always)]
    fn bits<T, M, I>(&self, p_len: usize, masks: M, text: I, text_len: usize) -> Option<usize>
    where
        M: Fn(T) -> u64,
        I: Iterator<Item = T>,
    {
        myers::<BOUNDED, T, M, I>(p_len, masks, text, text_len, self.0)
    }
    fn dp<T: PartialEq>(&self, a: &[T], b: &[T]) -> Option<usize> {
        levenshtein_dp(a, b, self.0)
    }
}

/// Optimal string alignment distance.
struct Osa;

impl Distance for Osa {
    fn max(&self) -> usize {
        usize::MAX
    }
    #[inline(always)]
    fn bits<T, M, I>(&self, p_len: usize, masks: M, text: I, _text_len: usize) -> Option<usize>
    where
        M: Fn(T) -> u64,
        I: Iterator<Item = T>,
    {
        Some(osa_bits(p_len, masks, text))
    }
    fn dp<T: PartialEq>(&self, a: &[T], b: &[T]) -> Option<usize> {
        Some(osa_dp(a, b))
    }
}

/// Shared set-up of both distances: cut the common affix, check the length difference, and
/// pick the pattern. Both distances are symmetric, so either side may be the pattern; the
/// longer one is taken when it fits in a word, which leaves the shorter one to loop over.
#[inline(always)]
fn drive<D: Distance>(dist: &D, a: &str, b: &str) -> Option<usize> {
    if is_ascii(a) && is_ascii(b) {
        let (a, b) = strip_affix(a.as_bytes(), b.as_bytes());
        let (short, long) = if a.len() <= b.len() { (a, b) } else { (b, a) };
        if long.len() - short.len() > dist.max() {
            return None;
        }
        if short.is_empty() {
            return Some(long.len());
        }
        let (p, t) = if long.len() <= MAX_BITS {
            (long, short)
        } else {
            (short, long)
        };
        if p.len() <= MAX_BITS {
            return with_ascii_masks(p, |masks| {
                let lookup = |c: u8| masks[usize::from(c & 0x7f)];
                dist.bits(p.len(), lookup, t.iter().copied(), t.len())
            });
        }
        return dist.dp(short, long);
    }
    let (a, b) = strip_affix_str(a, b);
    let (la, lb) = (a.chars().count(), b.chars().count());
    let (short, s_len, long, l_len) = if la <= lb {
        (a, la, b, lb)
    } else {
        (b, lb, a, la)
    };
    if l_len - s_len > dist.max() {
        return None;
    }
    if s_len == 0 {
        return Some(l_len);
    }
    let (p, p_len, t, t_len) = if l_len <= MAX_BITS {
        (long, l_len, short, s_len)
    } else {
        (short, s_len, long, l_len)
    };
    if p_len <= MAX_BITS {
        let mut buf = ['\0'; MAX_BITS];
        for (slot, c) in buf.iter_mut().zip(p.chars()) {
            *slot = c;
        }
        let masks = CharMasks::new(&buf[..p_len]);
        return dist.bits(p_len, |c| masks.get(c), t.chars(), t_len);
    }
    let short: Vec<char> = short.chars().collect();
    let long: Vec<char> = long.chars().collect();
    dist.dp(&short, &long)
}

/// Cut the common prefix and suffix of two slices.
#[inline]
fn strip_affix<'a, T: PartialEq>(a: &'a [T], b: &'a [T]) -> (&'a [T], &'a [T]) {
    let pre = a.iter().zip(b).take_while(|(x, y)| x == y).count();
    let (a, b) = (&a[pre..], &b[pre..]);
    let suf = a
        .iter()
        .rev()
        .zip(b.iter().rev())
        .take_while(|(x, y)| x == y)
        .count();
    (&a[..a.len() - suf], &b[..b.len() - suf])
}

/// Cut the common prefix and suffix of two strings, at character boundaries.
fn strip_affix_str<'a>(a: &'a str, b: &'a str) -> (&'a str, &'a str) {
    // Equal characters have equal UTF-8 lengths, so the byte offsets agree in both strings.
    let pre: usize = a
        .chars()
        .zip(b.chars())
        .take_while(|(x, y)| x == y)
        .map(|(x, _)| x.len_utf8())
        .sum();
    let (a, b) = (&a[pre..], &b[pre..]);
    let suf: usize = a
        .chars()
        .rev()
        .zip(b.chars().rev())
        .take_while(|(x, y)| x == y)
        .map(|(x, _)| x.len_utf8())
        .sum();
    (&a[..a.len() - suf], &b[..b.len() - suf])
}

/// Myers/Hyyrö bit-parallel Levenshtein distance. The pattern has `p_len` symbols
/// (1..=64) described by `masks`; `text` has `text_len` symbols. `None` when the distance
/// exceeds `max`; with `BOUNDED` it gives up as soon as that is certain.
#[inline(always)]
fn myers<const BOUNDED: bool, T, M, I>(
    p_len: usize,
    masks: M,
    text: I,
    text_len: usize,
    max: usize,
) -> Option<usize>
where
    M: Fn(T) -> u64,
    I: Iterator<Item = T>,
{
    debug_assert!((1..=MAX_BITS).contains(&p_len));
    // VP/VN: vertical +1/−1 deltas of the current column; all +1 for column 0.
    let mut vp = u64::MAX;
    let mut vn = 0u64;
    let last = 1u64 << (p_len - 1);
    // Bottom cell of the current column: D[p_len][j].
    let mut score = p_len;
    for (j, c) in text.enumerate() {
        let x = masks(c) | vn;
        let d0 = ((x & vp).wrapping_add(vp) ^ vp) | x;
        let hp = vn | !(d0 | vp);
        let hn = d0 & vp;
        // Branch-free; adding first keeps `score` from dipping below zero.
        score += usize::from(hp & last != 0);
        score -= usize::from(hn & last != 0);
        let hp = (hp << 1) | 1;
        let hn = hn << 1;
        vp = hn | !(d0 | hp);
        vn = hp & d0;
        // The bottom row changes by at most 1 per remaining column.
        if BOUNDED && score > max.saturating_add(text_len - j - 1) {
            return None;
        }
    }
    (score <= max).then_some(score)
}

/// Hyyrö's bit-parallel OSA distance; pattern of `p_len` symbols (1..=64) in `masks`.
#[inline(always)]
fn osa_bits<T, M, I>(p_len: usize, masks: M, text: I) -> usize
where
    M: Fn(T) -> u64,
    I: Iterator<Item = T>,
{
    debug_assert!((1..=MAX_BITS).contains(&p_len));
    let mut vp = u64::MAX;
    let mut vn = 0u64;
    let mut d0 = 0u64;
    let mut pm_prev = 0u64;
    let last = 1u64 << (p_len - 1);
    let mut score = p_len;
    for c in text {
        let pm = masks(c);
        // Cells where a transposition of the previous and current text symbols applies.
        let tr = ((!d0 & pm) << 1) & pm_prev;
        d0 = ((pm & vp).wrapping_add(vp) ^ vp) | pm | vn | tr;
        let hp = vn | !(d0 | vp);
        let hn = d0 & vp;
        // Branch-free; adding first keeps `score` from dipping below zero.
        score += usize::from(hp & last != 0);
        score -= usize::from(hn & last != 0);
        let hp = (hp << 1) | 1;
        let hn = hn << 1;
        vp = hn | !(d0 | hp);
        vn = hp & d0;
        pm_prev = pm;
    }
    score
}

/// Two-row Levenshtein for long strings, giving up when a whole row exceeds `max`.
fn levenshtein_dp<T: PartialEq>(p: &[T], t: &[T], max: usize) -> Option<usize> {
    let mut row: Vec<usize> = (0..=p.len()).collect();
    for (j, tc) in t.iter().enumerate() {
        let mut diag = row[0];
        row[0] = j + 1;
        let mut row_min = row[0];
        for (i, pc) in p.iter().enumerate() {
            let up = row[i + 1];
            let v = (diag + usize::from(pc != tc)).min(up + 1).min(row[i] + 1);
            diag = up;
            row[i + 1] = v;
            row_min = row_min.min(v);
        }
        // Every alignment passes through this row and costs never decrease along it.
        if row_min > max {
            return None;
        }
    }
    let d = row[p.len()];
    (d <= max).then_some(d)
}

/// Three-row OSA dynamic programme for long strings.
fn osa_dp<T: PartialEq>(p: &[T], t: &[T]) -> usize {
    let n = p.len();
    let mut two_back: Vec<usize> = (0..=n).collect();
    let mut prev: Vec<usize> = (0..=n).collect();
    let mut cur: Vec<usize> = vec![0; n + 1];
    for (j, tc) in t.iter().enumerate() {
        cur[0] = j + 1;
        for (i, pc) in p.iter().enumerate() {
            let cost = usize::from(pc != tc);
            let mut v = (prev[i] + cost).min(prev[i + 1] + 1).min(cur[i] + 1);
            if i > 0 && j > 0 && pc != tc && p[i - 1] == *tc && *pc == t[j - 1] {
                v = v.min(two_back[i - 1] + 1);
            }
            cur[i + 1] = v;
        }
        std::mem::swap(&mut two_back, &mut prev);
        std::mem::swap(&mut prev, &mut cur);
    }
    prev[n]
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// docs/check-values.md §4: (a, b, Levenshtein, OSA), computed by rapidfuzz 3.14.6 and
    /// jellyfish 1.3.0 (Levenshtein column), equal in strsim 0.11.1 and rapidfuzz-rs 0.5.0.
    /// kitten/sitting = 3 is also the textbook example (common practice, no source);
    /// CA/ABC = 3 (OSA) is the textbook OSA case of docs/methods.md §5.
    const ROWS: &[(&str, &str, usize, usize)] = &[
        ("kitten", "sitting", 3, 3),
        ("flaw", "lawn", 2, 2),
        ("CA", "ABC", 3, 3),
        ("abcdef", "abcdfe", 2, 1),
        ("MARTHA", "MARHTA", 2, 1),
        ("JONES", "JOHNSON", 4, 4),
        ("Saturday", "Sunday", 3, 3),
        ("gumbo", "gambol", 2, 2),
        ("book", "back", 2, 2),
        ("", "abc", 3, 3),
        ("Müller", "Mueller", 2, 2),
        ("DIXON", "DICKSONX", 4, 4),
        ("ab", "ba", 2, 1),
        ("a cat", "an act", 3, 2),
        ("teh", "the", 2, 1),
    ];

    #[test]
    fn reference_values() {
        for &(a, b, lev, osa) in ROWS {
            // rapidfuzz 3.14.6 / jellyfish 1.3.0 (docs/check-values.md §4)
            assert_eq!(levenshtein(a, b), lev, "levenshtein({a:?}, {b:?})");
            assert_eq!(levenshtein(b, a), lev, "levenshtein({b:?}, {a:?})");
            assert_eq!(osa_distance(a, b), osa, "osa_distance({a:?}, {b:?})");
            assert_eq!(osa_distance(b, a), osa, "osa_distance({b:?}, {a:?})");
            assert_eq!(levenshtein_within(a, b, lev), Some(lev));
            if lev > 0 {
                assert_eq!(levenshtein_within(a, b, lev - 1), None);
            }
        }
    }

    #[test]
    fn within_gives_up_on_length_difference() {
        assert_eq!(levenshtein_within("", "abcdef", 5), None);
        assert_eq!(levenshtein_within("", "abcdef", 6), Some(6));
        assert_eq!(levenshtein_within("same", "same", 0), Some(0));
        assert_eq!(levenshtein_within("ab", "ba", 0), None);
    }

    #[test]
    fn long_strings() {
        let a = "BAHNHOFSTRASSE ".repeat(5) + "NORD";
        let b = "BAHNHOFSTR. ".repeat(6) + "SUED";
        assert!(a.len() > 64 && b.len() > 64);
        assert_eq!(levenshtein(&a, &b), strsim::levenshtein(&a, &b));
        assert_eq!(osa_distance(&a, &b), strsim::osa_distance(&a, &b));
        let d = levenshtein(&a, &b);
        assert_eq!(levenshtein_within(&a, &b, d), Some(d));
        assert_eq!(levenshtein_within(&a, &b, d - 1), None);
    }

    fn short_name() -> impl Strategy<Value = String> {
        prop_oneof![
            "[ABC]{0,10}",
            "[a-zA-Z '\\-]{0,20}",
            "[aeiouäöüßé]{0,12}",
            "[ab€😀]{0,8}",
        ]
    }

    fn any_string() -> impl Strategy<Value = String> {
        prop_oneof![
            short_name(),
            "[ABCD]{60,140}",
            "[abäö]{55,100}",
            "\\PC{0,90}",
        ]
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(2000))]

        #[test]
        fn levenshtein_equals_strsim(a in any_string(), b in any_string()) {
            prop_assert_eq!(levenshtein(&a, &b), strsim::levenshtein(&a, &b));
        }

        #[test]
        fn osa_equals_strsim(a in any_string(), b in any_string()) {
            prop_assert_eq!(osa_distance(&a, &b), strsim::osa_distance(&a, &b));
        }

        #[test]
        fn short_pairs_equal_strsim(a in short_name(), b in short_name()) {
            prop_assert_eq!(levenshtein(&a, &b), strsim::levenshtein(&a, &b));
            prop_assert_eq!(osa_distance(&a, &b), strsim::osa_distance(&a, &b));
        }

        #[test]
        fn within_agrees_with_full_distance(a in any_string(), b in any_string(), k in 0usize..12) {
            let d = strsim::levenshtein(&a, &b);
            let want = (d <= k).then_some(d);
            prop_assert_eq!(levenshtein_within(&a, &b, k), want);
        }

        #[test]
        fn distance_laws(a in any_string(), b in any_string()) {
            let d = levenshtein(&a, &b);
            prop_assert_eq!(d, levenshtein(&b, &a));
            prop_assert_eq!(osa_distance(&a, &b), osa_distance(&b, &a));
            prop_assert!(osa_distance(&a, &b) <= d);
            let (la, lb) = (a.chars().count(), b.chars().count());
            prop_assert!(d >= la.abs_diff(lb) && d <= la.max(lb));
            prop_assert_eq!(levenshtein(&a, &a), 0);
            prop_assert_eq!(osa_distance(&a, &a), 0);
        }
    }
}
