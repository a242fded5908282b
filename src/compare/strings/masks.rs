//! Position bit masks of a short pattern, the building block of the bit-parallel kernels.
//!
//! In: a pattern of at most [`MAX_BITS`] symbols (ASCII bytes or `char`s).
//! Out: for any symbol `c`, a `u64` whose bit `i` is set when the pattern has `c` at
//! position `i`. The Jaro and edit-distance kernels look the other string's symbols up
//! here, so one 64-bit word answers "where in the pattern does this symbol occur?".

use std::cell::{RefCell, RefMut};

/// Longest pattern (in symbols) that fits one machine word of position bits.
pub(crate) const MAX_BITS: usize = 64;

/// A word with the lowest `n` bits set (`n` may be 64 or more: then all bits).
#[inline]
pub(crate) fn low_bits(n: usize) -> u64 {
    if n >= 64 {
        u64::MAX
    } else {
        (1u64 << n) - 1
    }
}

/// Whether `s` is all ASCII; like `str::is_ascii`, but quicker on the short strings the
/// kernels see (std checks strings under a word long byte by byte, with a branch each).
#[inline]
pub(crate) fn is_ascii(s: &str) -> bool {
    const HIGH: u64 = 0x8080_8080_8080_8080;
    let b = s.as_bytes();
    if b.len() >= 8 {
        let mut acc = 0u64;
        let mut chunks = b.chunks_exact(8);
        for c in &mut chunks {
            let mut w = [0u8; 8];
            w.copy_from_slice(c);
            acc |= u64::from_le_bytes(w);
        }
        // The last eight bytes, overlapping what was read: covers the remainder.
        let mut w = [0u8; 8];
        w.copy_from_slice(&b[b.len() - 8..]);
        acc |= u64::from_le_bytes(w);
        acc & HIGH == 0
    } else {
        b.iter().fold(0u8, |acc, &x| acc | x) & 0x80 == 0
    }
}

/// Position masks of an all-ASCII `pattern` (at most [`MAX_BITS`] long), indexed by byte.
#[inline]
fn ascii_table(pattern: &[u8]) -> [u64; 128] {
    debug_assert!(pattern.len() <= MAX_BITS);
    let mut table = [0u64; 128];
    fill_ascii(&mut table, pattern);
    table
}

/// Set the position bits of `pattern` in a zeroed table. Masking the byte to 7 bits keeps the
/// index in bounds without a check; callers only pass ASCII.
#[inline(always)]
fn fill_ascii(table: &mut [u64; 128], pattern: &[u8]) {
    for (i, &b) in pattern.iter().enumerate().take(MAX_BITS) {
        table[usize::from(b & 0x7f)] |= 1u64 << i;
    }
}

thread_local! {
    /// A zeroed 128-entry table per thread, so one-off comparisons need not clear 1 KiB of
    /// stack for every pair: [`with_ascii_masks`] sets the pattern's entries and zeroes them
    /// again afterwards.
    static ASCII_SCRATCH: RefCell<[u64; 128]> = const { RefCell::new([0; 128]) };
}

/// Zeroes the entries a pattern set, also if the kernel unwinds.
struct ScratchGuard<'a> {
    table: RefMut<'a, [u64; 128]>,
    pattern: &'a [u8],
}

impl Drop for ScratchGuard<'_> {
    fn drop(&mut self) {
        for &b in self.pattern {
            self.table[usize::from(b & 0x7f)] = 0;
        }
    }
}

/// Run `f` on the 128-entry table of positions of each ASCII byte in `pattern` (all ASCII,
/// at most [`MAX_BITS`] long). Uses the per-thread scratch table, or a fresh one when that is
/// unavailable (re-entrant use, thread teardown).
#[inline]
pub(crate) fn with_ascii_masks<R>(pattern: &[u8], f: impl Fn(&[u64; 128]) -> R) -> R {
    debug_assert!(pattern.len() <= MAX_BITS);
    let fast = ASCII_SCRATCH.try_with(|cell| {
        let table = cell.try_borrow_mut().ok()?;
        let mut guard = ScratchGuard { table, pattern };
        fill_ascii(&mut guard.table, pattern);
        Some(f(&guard.table))
    });
    match fast {
        Ok(Some(r)) => r,
        _ => f(&ascii_table(pattern)),
    }
}

/// Position masks of a pattern of `char`s: a direct table for ASCII and a short list
/// for the (few) other characters, searched linearly.
#[derive(Clone)]
pub(crate) struct CharMasks {
    ascii: [u64; 128],
    other_keys: [char; MAX_BITS],
    other_masks: [u64; MAX_BITS],
    n_other: usize,
}

impl CharMasks {
    /// Masks of `pattern`; `pattern.len() <= MAX_BITS` (longer input is cut).
    pub(crate) fn new(pattern: &[char]) -> Self {
        debug_assert!(pattern.len() <= MAX_BITS);
        let mut m = CharMasks {
            ascii: [0; 128],
            other_keys: ['\0'; MAX_BITS],
            other_masks: [0; MAX_BITS],
            n_other: 0,
        };
        for (i, &c) in pattern.iter().enumerate().take(MAX_BITS) {
            let bit = 1u64 << i;
            if c.is_ascii() {
                m.ascii[c as usize] |= bit;
            } else if let Some(k) = m.other_keys[..m.n_other].iter().position(|&o| o == c) {
                m.other_masks[k] |= bit;
            } else {
                // At most MAX_BITS distinct characters, so there is always room.
                m.other_keys[m.n_other] = c;
                m.other_masks[m.n_other] = bit;
                m.n_other += 1;
            }
        }
        m
    }

    /// Positions of `c` in the pattern.
    #[inline(always)]
    pub(crate) fn get(&self, c: char) -> u64 {
        if c.is_ascii() {
            self.ascii[c as usize & 0x7f]
        } else {
            self.other_keys[..self.n_other]
                .iter()
                .position(|&o| o == c)
                .map_or(0, |k| self.other_masks[k])
        }
    }

    /// The table of positions of each ASCII character.
    #[inline(always)]
    pub(crate) fn ascii_table(&self) -> &[u64; 128] {
        &self.ascii
    }

    /// Positions of the ASCII byte `b` in the pattern.
    #[inline(always)]
    pub(crate) fn get_ascii(&self, b: u8) -> u64 {
        self.ascii[usize::from(b & 0x7f)]
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn low_bits_edges() {
        assert_eq!(low_bits(0), 0);
        assert_eq!(low_bits(1), 1);
        assert_eq!(low_bits(63), u64::MAX >> 1);
        assert_eq!(low_bits(64), u64::MAX);
        assert_eq!(low_bits(200), u64::MAX);
    }

    #[test]
    fn ascii_check_agrees_with_std() {
        for s in [
            "",
            "A",
            "ABCDEFG",
            "ABCDEFGH",
            "ABCDEFGHI",
            "ABCDEFGHIJKLMNOPQ",
            "Ä",
            "ABCDEFGÄ",
        ] {
            assert_eq!(is_ascii(s), s.is_ascii(), "{s:?}");
        }
        for n in 0..40 {
            let mut s = "x".repeat(n);
            assert!(is_ascii(&s));
            s.push('é');
            assert!(!is_ascii(&s));
            s.insert(0, 'ß');
            assert!(!is_ascii(&s));
        }
    }

    #[test]
    fn ascii_masks_mark_positions() {
        let m = ascii_table(b"ANNA");
        assert_eq!(m[usize::from(b'A')], 0b1001);
        assert_eq!(m[usize::from(b'N')], 0b0110);
        assert_eq!(m[usize::from(b'X')], 0);
    }

    #[test]
    fn scratch_table_is_cleared_after_use() {
        let first = with_ascii_masks(b"ANNA", |m| (m[usize::from(b'A')], m[usize::from(b'N')]));
        assert_eq!(first, (0b1001, 0b0110));
        // A second pattern must not see the first one's bits.
        let second = with_ascii_masks(b"NX", |m| (m[usize::from(b'A')], m[usize::from(b'N')]));
        assert_eq!(second, (0, 0b01));
        // Re-entrant use falls back to a fresh table.
        let nested = with_ascii_masks(b"AB", |outer| {
            let inner = with_ascii_masks(b"BA", |m| m[usize::from(b'A')]);
            (outer[usize::from(b'A')], inner)
        });
        assert_eq!(nested, (0b01, 0b10));
        assert!(with_ascii_masks(b"", |m| m.iter().all(|&x| x == 0)));
    }

    #[test]
    fn char_masks_mark_ascii_and_other() {
        let p: Vec<char> = "MÜLLERÜ".chars().collect();
        let m = CharMasks::new(&p);
        assert_eq!(m.get('Ü'), 0b100_0010);
        assert_eq!(m.get('L'), 0b000_1100);
        assert_eq!(m.get_ascii(b'M'), 1);
        assert_eq!(m.get('ß'), 0);
    }

    #[test]
    fn char_masks_full_width() {
        // 64 distinct non-ASCII characters fill the side list exactly.
        let p: Vec<char> = (0..64u32)
            .map(|i| char::from_u32(0x100 + i).unwrap_or('?'))
            .collect();
        let m = CharMasks::new(&p);
        for (i, &c) in p.iter().enumerate() {
            assert_eq!(m.get(c), 1u64 << i);
        }
    }
}
