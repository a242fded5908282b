//! Blocking keys as the spec declares them: key functions applied to attributes.

use std::fmt;

use crate::record::Attr;

/// A function applied to an attribute to make part of a blocking key.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum KeyFn {
    /// The standardized value itself.
    Value,
    /// American Soundex of the folded value.
    Soundex,
    /// The first `n` characters of the folded value (spaces removed).
    Prefix(usize),
    /// The first letter of the folded value.
    Initial,
    /// The year of a date.
    Year,
    /// The local part of an e-mail address (before `@`, tag already removed): finds the
    /// same mailbox name at another provider.
    LocalPart,
    /// The national significant number of a phone (without country code or trunk
    /// prefix): finds the same number written with another or no country code.
    National,
}

/// One part of a blocking key.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct KeyPart {
    /// The function.
    pub func: KeyFn,
    /// The attribute it is applied to.
    pub attr: Attr,
}

impl fmt::Display for KeyPart {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.func {
            KeyFn::Value => write!(f, "{}", self.attr),
            KeyFn::Soundex => write!(f, "soundex({})", self.attr),
            KeyFn::Prefix(n) => write!(f, "prefix({}, {n})", self.attr),
            KeyFn::Initial => write!(f, "initial({})", self.attr),
            KeyFn::Year => write!(f, "year({})", self.attr),
            KeyFn::LocalPart => write!(f, "local_part({})", self.attr),
            KeyFn::National => write!(f, "national({})", self.attr),
        }
    }
}

/// The key parts as a spec writes them, for messages.
pub const KEY_HELP: &str = "an attribute name, soundex(attr), prefix(attr, n), initial(attr), \
     year(attr), local_part(email), national(phone)";

impl KeyPart {
    /// Parse a key part as written in the spec.
    pub fn parse(s: &str) -> std::result::Result<KeyPart, String> {
        let t = s.trim();
        let attr_of = |name: &str| {
            Attr::from_name(name.trim()).ok_or_else(|| {
                format!(
                    "`{}` is not an attribute; allowed: {}",
                    name.trim(),
                    Attr::all_names()
                )
            })
        };
        let Some(open) = t.find('(') else {
            return Ok(KeyPart {
                func: KeyFn::Value,
                attr: attr_of(t)?,
            });
        };
        let Some(inner) = t[open + 1..].strip_suffix(')') else {
            return Err(format!("`{t}`: missing `)`; allowed: {KEY_HELP}"));
        };
        let func = t[..open].trim();
        let args: Vec<&str> = inner.split(',').map(str::trim).collect();
        match (func, args.as_slice()) {
            ("soundex", [a]) => Ok(KeyPart {
                func: KeyFn::Soundex,
                attr: attr_of(a)?,
            }),
            ("initial", [a]) => Ok(KeyPart {
                func: KeyFn::Initial,
                attr: attr_of(a)?,
            }),
            ("year", [a]) => Ok(KeyPart {
                func: KeyFn::Year,
                attr: attr_of(a)?,
            }),
            ("local_part", [a]) => match attr_of(a)? {
                Attr::Email => Ok(KeyPart {
                    func: KeyFn::LocalPart,
                    attr: Attr::Email,
                }),
                other => Err(format!("`{t}`: local_part applies to email, not {other}")),
            },
            ("national", [a]) => match attr_of(a)? {
                Attr::Phone => Ok(KeyPart {
                    func: KeyFn::National,
                    attr: Attr::Phone,
                }),
                other => Err(format!("`{t}`: national applies to phone, not {other}")),
            },
            ("prefix", [a, n]) => {
                let n: usize = n
                    .parse()
                    .ok()
                    .filter(|n| (1..=32).contains(n))
                    .ok_or_else(|| format!("`{t}`: the length must be a number from 1 to 32"))?;
                Ok(KeyPart {
                    func: KeyFn::Prefix(n),
                    attr: attr_of(a)?,
                })
            }
            _ => Err(format!("`{t}` is not a key function; allowed: {KEY_HELP}")),
        }
    }
}

/// One blocking key: records agreeing on all parts become candidate pairs.
#[derive(Debug, Clone)]
pub struct BlockSpec {
    /// Name used in the summary and in errors.
    pub name: String,
    /// Key parts; all must be present for a record to be blocked on this key.
    pub keys: Vec<KeyPart>,
    /// The parts' values are sorted before they are joined, so that records agree on
    /// the key whichever part holds which value (`soundex(given_name)` and
    /// `soundex(family_name)` with the names swapped).
    pub any_order: bool,
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn key_display_round_trips() {
        for s in [
            "email",
            "soundex(family_name)",
            "prefix(postcode, 3)",
            "year(birth_date)",
            "local_part(email)",
            "national(phone)",
        ] {
            assert_eq!(KeyPart::parse(s).unwrap().to_string(), s);
        }
    }
}
