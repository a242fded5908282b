//! Company names: legal form split off, connectors unified.
//!
//! In: a raw company name (or a raw legal-form value). Out: the name ([`clean_text`](super::clean_text)
//! rules) without its legal form, and the legal form in a canonical short spelling.
//! - Dotted initialisms are joined first: `S.A.R.L.`, `S. A.`, `L.L.C.`, `B.V.` →
//!   `sarl`, `sa`, `llc`, `bv`.
//! - Legal forms are recognized at the end of the name (`Acme, Inc.` → `acme` + `inc`;
//!   `Müller GmbH & Co. KG` → `müller` + `gmbh & co kg`) and, for French forms
//!   (`sarl sas sasu eurl`), also at the start (`SARL Dupont` → `dupont` + `sarl`).
//!   Long forms map to the short ones (`Incorporated` → `inc`, `Limited` → `ltd`,
//!   `Corporation` → `corp`, `Gesellschaft mit beschränkter Haftung` → `gmbh`).
//!   The name always keeps at least one word.
//! - `&`, `+`, `and`, `und`, `et`, `y` between two words become `&`, so `Smith and
//!   Sons`, `Smith & Sons` and `Smith + Sons` agree; `AT&T` becomes `at & t`.
//!
//! Legal forms (common practice, no source): inc, corp, llc, llp, lp, ltd, plc,
//! pty ltd, gmbh, ag, kg, ohg, ug, ek, ev, gmbh & co kg, ag & co kg, sa, sarl, sas, sasu,
//! eurl, sl, slu, bv, nv, ab, as, oy, spa, srl, sro.

use super::text::clean_text_keep;
use super::Cleaned;

/// (word sequence, canonical form), longest first where they overlap.
const LEGAL_FORMS: &[(&[&str], &str)] = &[
    (&["gmbh", "&", "co", "kg"], "gmbh & co kg"),
    (&["gmbh", "&", "co", "kgaa"], "gmbh & co kgaa"),
    (&["ag", "&", "co", "kg"], "ag & co kg"),
    (&["gesellschaft", "mit", "beschränkter", "haftung"], "gmbh"),
    (&["ug", "haftungsbeschränkt"], "ug"),
    (&["pty", "ltd"], "pty ltd"),
    (&["pty", "limited"], "pty ltd"),
    (&["public", "limited", "company"], "plc"),
    (&["limited", "liability", "company"], "llc"),
    (&["incorporated"], "inc"),
    (&["inc"], "inc"),
    (&["corporation"], "corp"),
    (&["corp"], "corp"),
    (&["llc"], "llc"),
    (&["llp"], "llp"),
    (&["lp"], "lp"),
    (&["limited"], "ltd"),
    (&["ltd"], "ltd"),
    (&["plc"], "plc"),
    (&["gmbh"], "gmbh"),
    (&["ag"], "ag"),
    (&["kgaa"], "kgaa"),
    (&["kg"], "kg"),
    (&["ohg"], "ohg"),
    (&["ug"], "ug"),
    (&["ek"], "ek"),
    (&["ev"], "ev"),
    (&["sa"], "sa"),
    (&["sarl"], "sarl"),
    (&["sas"], "sas"),
    (&["sasu"], "sasu"),
    (&["eurl"], "eurl"),
    (&["sl"], "sl"),
    (&["slu"], "slu"),
    (&["bv"], "bv"),
    (&["nv"], "nv"),
    (&["ab"], "ab"),
    (&["as"], "as"),
    (&["oy"], "oy"),
    (&["spa"], "spa"),
    (&["srl"], "srl"),
    (&["sro"], "sro"),
];

const LEADING_FORMS: &[&str] = &["sarl", "sas", "sasu", "eurl"];

const CONNECTORS: &[&str] = &["&", "and", "und", "et", "y"];

/// Join dotted initialisms: `S.A.R.L.` -> `SARL`, `S. A.` -> `SA`.
fn join_initialisms(raw: &str) -> String {
    let mut out: Vec<String> = Vec::new();
    let mut run = String::new();
    let is_initials = |t: &str| {
        let mut chars = t.chars();
        let mut count = 0;
        loop {
            match (chars.next(), chars.next()) {
                (Some(c), Some('.')) if c.is_alphabetic() => count += 1,
                (Some(c), None) if c.is_alphabetic() && count > 0 => return true,
                (None, _) => return count > 0,
                _ => return false,
            }
        }
    };
    for token in raw.split_whitespace() {
        let (core, comma) = match token.strip_suffix(',') {
            Some(c) => (c, true),
            None => (token, false),
        };
        if is_initials(core) {
            run.extend(core.chars().filter(|&c| c != '.'));
            if comma {
                out.push(std::mem::take(&mut run));
            }
        } else {
            if !run.is_empty() {
                out.push(std::mem::take(&mut run));
            }
            out.push(token.to_string());
        }
    }
    if !run.is_empty() {
        out.push(run);
    }
    out.join(" ")
}

fn clean_words(raw: &str) -> Vec<String> {
    let joined = join_initialisms(raw).replace('+', "&");
    let cleaned = clean_text_keep(&joined, &['&']);
    let mut words: Vec<String> = cleaned
        .split(' ')
        .filter(|w| !w.is_empty())
        .map(str::to_string)
        .collect();
    let n = words.len();
    for w in words.iter_mut().take(n.saturating_sub(1)).skip(1) {
        if CONNECTORS.contains(&w.as_str()) {
            *w = "&".to_string();
        }
    }
    words
}

/// A company name split into name and legal form.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct CompanyName {
    /// The name without legal form.
    pub name: String,
    /// The canonical legal form, if one was found.
    pub legal_form: Option<String>,
}

/// Split a company name into name and legal form (rules in the module doc).
/// `None` when nothing usable is left.
pub fn split_company(raw: &str) -> Option<CompanyName> {
    let mut words = clean_words(raw);
    if words.is_empty() {
        return None;
    }
    // A connector left dangling at the end ("Smith &", "AT&").
    while words.len() > 1 && words.last().is_some_and(|w| w == "&") {
        words.pop();
    }
    // Strip legal forms from the end until none is left ("Foo LLP Inc"); the last
    // one written (the outermost) is the legal form.
    let mut legal_form: Option<String> = None;
    loop {
        let found = LEGAL_FORMS.iter().find(|(form, _)| {
            let k = form.len();
            words.len() > k
                && words[words.len() - k..]
                    .iter()
                    .map(String::as_str)
                    .eq(form.iter().copied())
        });
        let Some((form, canonical)) = found else {
            break;
        };
        words.truncate(words.len() - form.len());
        legal_form.get_or_insert_with(|| canonical.to_string());
        // A connector left dangling at the end ("Smith &" after "Smith & Co KG").
        while words.len() > 1 && words.last().is_some_and(|w| w == "&") {
            words.pop();
        }
    }
    if legal_form.is_none() && words.len() > 1 && LEADING_FORMS.contains(&words[0].as_str()) {
        legal_form = Some(words.remove(0));
    }
    Some(CompanyName {
        name: words.join(" "),
        legal_form,
    })
}

/// Standardize a legal-form value to its canonical spelling (`GmbH` → `gmbh`,
/// `Inc.` → `inc`, `S.A.R.L.` → `sarl`); unknown forms are cleaned text.
pub fn normalize_legal_form(raw: &str) -> Cleaned {
    let words = clean_words(raw);
    if words.is_empty() {
        return Cleaned::Invalid;
    }
    for (form, canonical) in LEGAL_FORMS {
        if words.iter().map(String::as_str).eq(form.iter().copied()) {
            return Cleaned::Parsed(canonical.to_string());
        }
    }
    Cleaned::Parsed(words.join(" "))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn split(raw: &str) -> (String, Option<String>) {
        let c = split_company(raw).unwrap();
        (c.name, c.legal_form)
    }

    fn nl(name: &str, form: Option<&str>) -> (String, Option<String>) {
        (name.to_string(), form.map(str::to_string))
    }

    #[test]
    fn legal_forms_split_off() {
        // Legal-form abbreviations (common practice, no source).
        assert_eq!(split("Acme, Inc."), nl("acme", Some("inc")));
        assert_eq!(split("Acme Incorporated"), nl("acme", Some("inc")));
        assert_eq!(split("Widgets LLC"), nl("widgets", Some("llc")));
        assert_eq!(split("Widgets L.L.C."), nl("widgets", Some("llc")));
        assert_eq!(split("Foo Ltd"), nl("foo", Some("ltd")));
        assert_eq!(split("Foo Limited"), nl("foo", Some("ltd")));
        assert_eq!(split("Barclays PLC"), nl("barclays", Some("plc")));
        assert_eq!(split("Müller GmbH"), nl("müller", Some("gmbh")));
        assert_eq!(
            split("Müller GmbH & Co. KG"),
            nl("müller", Some("gmbh & co kg"))
        );
        assert_eq!(split("Siemens AG"), nl("siemens", Some("ag")));
        assert_eq!(split("Dupont S.A.R.L."), nl("dupont", Some("sarl")));
        assert_eq!(split("Dupont S.A."), nl("dupont", Some("sa")));
        assert_eq!(split("Dupont SAS"), nl("dupont", Some("sas")));
        assert_eq!(split("SARL Dupont"), nl("dupont", Some("sarl")));
        assert_eq!(
            split("Construcciones García S.L."),
            nl("construcciones garcía", Some("sl"))
        );
        assert_eq!(split("Philips B.V."), nl("philips", Some("bv")));
        assert_eq!(split("Shell N.V."), nl("shell", Some("nv")));
        // The name keeps at least one word.
        assert_eq!(split("Limited"), nl("limited", None));
        // Several forms: all removed, the outermost kept.
        assert_eq!(split("Foo LLP Inc."), nl("foo", Some("inc")));
    }

    #[test]
    fn connectors_unified() {
        let want = nl("smith & sons", Some("ltd"));
        assert_eq!(split("Smith and Sons Ltd"), want);
        assert_eq!(split("Smith & Sons Ltd"), want);
        assert_eq!(split("Smith + Sons Ltd"), want);
        assert_eq!(
            split("Schmidt und Söhne GmbH"),
            nl("schmidt & söhne", Some("gmbh"))
        );
        assert_eq!(split("Dupont et Fils"), nl("dupont & fils", None));
        assert_eq!(
            split("Hijos y Nietos S.A."),
            nl("hijos & nietos", Some("sa"))
        );
        assert_eq!(split("AT&T Inc."), nl("at & t", Some("inc")));
        // Only between words: a leading "Y" stays.
        assert_eq!(split("Y Combinator"), nl("y combinator", None));
    }

    #[test]
    fn legal_form_values() {
        assert_eq!(normalize_legal_form("GmbH"), Cleaned::Parsed("gmbh".into()));
        assert_eq!(normalize_legal_form("Inc."), Cleaned::Parsed("inc".into()));
        assert_eq!(
            normalize_legal_form("S.A.R.L."),
            Cleaned::Parsed("sarl".into())
        );
        assert_eq!(
            normalize_legal_form("Limited"),
            Cleaned::Parsed("ltd".into())
        );
        assert_eq!(normalize_legal_form("..."), Cleaned::Invalid);
    }

    #[test]
    fn initialisms() {
        assert_eq!(join_initialisms("Dupont S. A."), "Dupont SA");
        assert_eq!(join_initialisms("J.P. Morgan"), "JP Morgan");
        assert_eq!(join_initialisms("Acme, Inc."), "Acme, Inc.");
    }
}
