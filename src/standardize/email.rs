//! E-mail addresses: syntax check and matching key.
//!
//! In: a raw address. Out: the matching key (trimmed, NFC, lower-case, `+tag` removed)
//! or invalid. Accepted syntax is a practical subset of RFC 5322 §3.4.1 with the RFC
//! 5321 length limits, as email-validator 2.4.0 checks it by default:
//! - exactly one `@`; `mailto:` and a surrounding `<...>` (`Name <a@b.c>`) are removed;
//! - local part: a dot-atom (RFC 5322 atext plus non-ASCII letters, RFC 6531), no
//!   leading, trailing or double dot, at most 64 octets (RFC 5321 §4.5.3.1.1);
//!   quoted local parts are refused;
//! - domain: at most 255 octets, at least two labels (`x@localhost` is refused), labels
//!   of 1–63 octets made of letters, digits, hyphens and non-ASCII letters, not
//!   starting or ending with a hyphen, a top-level label that is not all digits; no
//!   domain literals (`[192.168.1.1]`).
//!
//! The whole address is lower-cased although RFC 5321 §2.4 lets the local part be
//! case-sensitive (docs/methods.md §9: matching key is lower-case). Sub-addressing (RFC 5233
//! `user+tag`) is removed: `user+news@example.com` → `user@example.com`. That equates
//! addresses that only differ in the tag, which is what a matching key should do.

use unicode_normalization::UnicodeNormalization;

use super::Cleaned;

const ATEXT_SPECIALS: &[u8] = b"!#$%&'*+-/=?^_`{|}~";

fn local_ok(local: &str) -> bool {
    if local.is_empty() || local.len() > 64 {
        return false;
    }
    if local.starts_with('.') || local.ends_with('.') || local.contains("..") {
        return false;
    }
    local.chars().all(|c| {
        if c.is_ascii() {
            c.is_ascii_alphanumeric() || c == '.' || ATEXT_SPECIALS.contains(&(c as u8))
        } else {
            c.is_alphanumeric() || unicode_normalization::char::is_combining_mark(c)
        }
    })
}

fn domain_ok(domain: &str) -> bool {
    if domain.is_empty() || domain.len() > 255 {
        return false;
    }
    let mut labels = 0;
    let mut last = "";
    for label in domain.split('.') {
        if label.is_empty() || label.len() > 63 {
            return false;
        }
        if label.starts_with('-') || label.ends_with('-') {
            return false;
        }
        let chars_ok = label.chars().all(|c| {
            if c.is_ascii() {
                c.is_ascii_alphanumeric() || c == '-'
            } else {
                c.is_alphanumeric() || unicode_normalization::char::is_combining_mark(c)
            }
        });
        if !chars_ok {
            return false;
        }
        labels += 1;
        last = label;
    }
    labels >= 2 && !last.bytes().all(|b| b.is_ascii_digit())
}

/// Rules a provider documents for its own addresses; true when something changed.
///
/// Gmail: dots in the user name are ignored and `googlemail.com` is the same mailbox as
/// `gmail.com` (Google Account Help, "Dots don't matter in Gmail addresses"; from
/// memory). No other provider rules are applied.
fn provider_rules(local: &mut String, domain: &mut String) -> bool {
    if domain == "googlemail.com" || domain == "gmail.com" {
        let before = (local.len(), domain.len());
        local.retain(|c| c != '.');
        if domain == "googlemail.com" {
            *domain = "gmail.com".to_string();
        }
        return before != (local.len(), domain.len());
    }
    false
}

/// `local@domain` lower-cased with the provider rules applied, in one allocation, for
/// ASCII addresses (the same result as the general path), and whether the provider
/// rules changed anything.
fn assemble_ascii(local: &str, domain: &str) -> (String, bool) {
    let gmail = domain.eq_ignore_ascii_case("gmail.com");
    let googlemail = domain.eq_ignore_ascii_case("googlemail.com");
    let mut out = String::with_capacity(local.len() + 1 + domain.len());
    let mut changed = false;
    for b in local.bytes() {
        if b == b'.' && (gmail || googlemail) {
            changed = true;
            continue;
        }
        out.push(char::from(b.to_ascii_lowercase()));
    }
    out.push('@');
    if googlemail {
        out.push_str("gmail.com");
        changed = true;
    } else {
        out.extend(domain.bytes().map(|b| char::from(b.to_ascii_lowercase())));
    }
    (out, changed)
}

/// Validate and normalize an e-mail address (rules in the module doc).
pub fn normalize_email(raw: &str) -> Cleaned {
    let mut s = raw.trim();
    let mut repaired = false;
    if let (Some(open), Some(close)) = (s.rfind('<'), s.rfind('>')) {
        if open < close && close == s.len() - 1 {
            s = s[open + 1..close].trim();
            repaired = true;
        }
    }
    if let Some(head) = s.get(..7) {
        if head.eq_ignore_ascii_case("mailto:") {
            s = &s[7..];
            repaired = true;
        }
    }
    let Some((local, domain)) = s.split_once('@') else {
        return Cleaned::Invalid;
    };
    if domain.contains('@') || !local_ok(local) || !domain_ok(domain) {
        return Cleaned::Invalid;
    }
    let mut local_key = local;
    if let Some(plus) = local.find('+') {
        if local_ok(&local[..plus]) {
            local_key = &local[..plus];
            repaired = true;
        }
    }
    if local_key.is_ascii() && domain.is_ascii() {
        let (out, changed) = assemble_ascii(local_key, domain);
        return if repaired || changed {
            Cleaned::Repaired(out)
        } else {
            Cleaned::Parsed(out)
        };
    }
    let lower = |x: &str| -> String {
        if x.is_ascii() {
            x.to_ascii_lowercase()
        } else {
            x.nfc().collect::<String>().to_lowercase()
        }
    };
    let (mut local_out, mut domain_out) = (lower(local_key), lower(domain));
    if provider_rules(&mut local_out, &mut domain_out) {
        repaired = true;
    }
    let out = format!("{local_out}@{domain_out}");
    if repaired {
        Cleaned::Repaired(out)
    } else {
        Cleaned::Parsed(out)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn key(s: &str) -> Option<String> {
        normalize_email(s).into_value()
    }

    #[test]
    fn email_validator_check_values() {
        // docs/check-values.md §7 (email-validator 2.4.0): valid rows, then lower-cased
        // (our matching key) and +tag removed.
        assert_eq!(
            key("John.Doe@Example.COM").as_deref(),
            Some("john.doe@example.com")
        );
        assert_eq!(
            key("MÜLLER@Example.de").as_deref(),
            Some("müller@example.de")
        );
        assert_eq!(
            key("user+tag@example.com").as_deref(),
            Some("user@example.com")
        );
        assert_eq!(key("Pelé@exämple.de").as_deref(), Some("pelé@exämple.de"));
        assert_eq!(key("用户@例子.广告").as_deref(), Some("用户@例子.广告"));
        // Invalid rows of the same table.
        for bad in [
            "a..b@example.com",
            ".abc@example.com",
            "abc@example..com",
            "ab c@example.com",
            "\"john doe\"@example.com",
            "x@localhost",
            "abc@[192.168.1.1]",
        ] {
            assert_eq!(normalize_email(bad), Cleaned::Invalid, "{bad}");
        }
    }

    #[test]
    fn gmail_rules_only_for_gmail() {
        // Provider rule documented by Google (dots ignored, googlemail.com = gmail.com).
        assert_eq!(
            key("Jane.Roe@GoogleMail.com").as_deref(),
            Some("janeroe@gmail.com")
        );
        assert_eq!(
            key("j.a.n.e+news@gmail.com").as_deref(),
            Some("jane@gmail.com")
        );
        assert_eq!(
            normalize_email("janeroe@gmail.com"),
            Cleaned::Parsed("janeroe@gmail.com".into())
        );
        // Other providers keep their dots.
        assert_eq!(
            key("jane.roe@example.com").as_deref(),
            Some("jane.roe@example.com")
        );
    }

    #[test]
    fn local_part_length_limit() {
        // RFC 5321 §4.5.3.1.1: local part at most 64 octets (docs/check-values.md §7:
        // the 65-character local part fails email-validator's strict mode).
        let ok = format!("{}@example.com", "a".repeat(64));
        let long = format!("{}@example.com", "a".repeat(65));
        assert!(key(&ok).is_some());
        assert_eq!(normalize_email(&long), Cleaned::Invalid);
    }

    #[test]
    fn repairs_and_plain_parse() {
        assert_eq!(
            normalize_email("  a@b.co "),
            Cleaned::Parsed("a@b.co".into())
        );
        assert_eq!(
            normalize_email("Jane Roe <Jane@Example.org>"),
            Cleaned::Repaired("jane@example.org".into())
        );
        assert_eq!(
            normalize_email("mailto:x@y.de"),
            Cleaned::Repaired("x@y.de".into())
        );
        // A local part that is only a tag keeps it.
        assert_eq!(key("+tag@example.com").as_deref(), Some("+tag@example.com"));
        // RFC 5322 §3.2.3 atext specials are allowed.
        assert!(key("o'hara!#$%&*/=?^_`{|}~-x@example.com").is_some());
        for bad in [
            "", "@", "a@", "@b.c", "a@b@c.d", "a@-b.com", "a@b.123", "a.@b.com",
        ] {
            assert_eq!(normalize_email(bad), Cleaned::Invalid, "{bad}");
        }
    }

    proptest! {
        #[test]
        fn ascii_assembly_matches_the_general_rules(
            local in "[a-zA-Z0-9._-]{1,12}",
            domain in "[a-zA-Z0-9.-]{1,12}|(?i)gmail\\.com|(?i)googlemail\\.com",
        ) {
            let (mut l, mut d) = (local.to_lowercase(), domain.to_lowercase());
            let changed = provider_rules(&mut l, &mut d);
            prop_assert_eq!(assemble_ascii(&local, &domain), (format!("{l}@{d}"), changed));
        }

        #[test]
        fn normalized_email_is_stable(s in "[a-zA-Z0-9._+-]{1,12}@[a-zA-Z0-9-]{1,8}\\.[a-z]{2,4}") {
            if let Some(k) = key(&s) {
                prop_assert_eq!(key(&k), Some(k.clone()));
                prop_assert_eq!(k.to_lowercase(), k.clone());
            }
        }
    }
}
