//! Invented places: countries, towns, postcodes and street addresses.
//!
//! In: a country and a random generator. Out: an [`Address`] in one of a fixed set of
//! invented towns, and the text of its street line in the country's conventions. Town
//! and street names are composed from word pools, house numbers and postcodes are
//! random within each country's postcode format; any resemblance to a real place is
//! incidental. The towns of a country are the same for every seed (they come from a
//! fixed internal seed), so postcodes and towns stay consistent across runs.

use std::sync::OnceLock;

use super::names::{skewed_index, Culture};
use crate::util::{stable_hash, Rng};

/// The countries customers live in.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Country {
    /// United States.
    Us,
    /// United Kingdom.
    Gb,
    /// Ireland.
    Ie,
    /// Germany.
    De,
    /// Austria.
    At,
    /// Switzerland.
    Ch,
    /// France.
    Fr,
    /// Spain.
    Es,
    /// Netherlands.
    Nl,
}

impl Country {
    /// All countries, in a fixed order.
    pub const ALL: [Country; 9] = [
        Country::Us,
        Country::Gb,
        Country::Ie,
        Country::De,
        Country::At,
        Country::Ch,
        Country::Fr,
        Country::Es,
        Country::Nl,
    ];

    /// Position in [`Country::ALL`].
    pub fn index(self) -> usize {
        self as usize
    }

    /// ISO 3166-1 alpha-2 code.
    pub fn iso(self) -> &'static str {
        match self {
            Country::Us => "US",
            Country::Gb => "GB",
            Country::Ie => "IE",
            Country::De => "DE",
            Country::At => "AT",
            Country::Ch => "CH",
            Country::Fr => "FR",
            Country::Es => "ES",
            Country::Nl => "NL",
        }
    }

    /// English short name.
    pub fn english_name(self) -> &'static str {
        match self {
            Country::Us => "United States",
            Country::Gb => "United Kingdom",
            Country::Ie => "Ireland",
            Country::De => "Germany",
            Country::At => "Austria",
            Country::Ch => "Switzerland",
            Country::Fr => "France",
            Country::Es => "Spain",
            Country::Nl => "Netherlands",
        }
    }

    /// Share of customers living in the country (sums to 1 over [`Country::ALL`]).
    pub fn share(self) -> f64 {
        match self {
            Country::Us => 0.30,
            Country::Gb => 0.24,
            Country::Ie => 0.06,
            Country::De => 0.15,
            Country::At => 0.04,
            Country::Ch => 0.04,
            Country::Fr => 0.06,
            Country::Es => 0.06,
            Country::Nl => 0.05,
        }
    }

    /// A country drawn by [`Country::share`].
    pub fn draw(rng: &mut Rng) -> Country {
        let mut u = rng.next_f64();
        for c in Country::ALL {
            if u < c.share() {
                return c;
            }
            u -= c.share();
        }
        Country::Us
    }

    /// The naming culture of a resident, drawn from the country's mix.
    pub fn draw_culture(self, rng: &mut Rng) -> Culture {
        let mix: &[(Culture, f64)] = match self {
            Country::Us => &[
                (Culture::English, 0.74),
                (Culture::Spanish, 0.12),
                (Culture::Irish, 0.05),
                (Culture::German, 0.05),
                (Culture::French, 0.02),
                (Culture::Dutch, 0.02),
            ],
            Country::Gb => &[
                (Culture::English, 0.85),
                (Culture::Irish, 0.08),
                (Culture::French, 0.03),
                (Culture::Spanish, 0.02),
                (Culture::German, 0.02),
            ],
            Country::Ie => &[(Culture::Irish, 0.85), (Culture::English, 0.15)],
            Country::De | Country::At => &[
                (Culture::German, 0.9),
                (Culture::Dutch, 0.03),
                (Culture::French, 0.03),
                (Culture::Spanish, 0.02),
                (Culture::English, 0.02),
            ],
            Country::Ch => &[
                (Culture::German, 0.62),
                (Culture::French, 0.3),
                (Culture::Spanish, 0.04),
                (Culture::English, 0.04),
            ],
            Country::Fr => &[
                (Culture::French, 0.9),
                (Culture::Spanish, 0.05),
                (Culture::German, 0.03),
                (Culture::English, 0.02),
            ],
            Country::Es => &[
                (Culture::Spanish, 0.93),
                (Culture::French, 0.03),
                (Culture::English, 0.04),
            ],
            Country::Nl => &[
                (Culture::Dutch, 0.9),
                (Culture::German, 0.04),
                (Culture::English, 0.04),
                (Culture::French, 0.02),
            ],
        };
        let mut u = rng.next_f64();
        for &(c, w) in mix {
            if u < w {
                return c;
            }
            u -= w;
        }
        mix[0].0
    }

    /// Street-naming style of the country.
    fn street_style(self) -> StreetStyle {
        match self {
            Country::Us => StreetStyle::Us,
            Country::Gb | Country::Ie => StreetStyle::British,
            Country::De | Country::At | Country::Ch => StreetStyle::German,
            Country::Fr => StreetStyle::French,
            Country::Es => StreetStyle::Spanish,
            Country::Nl => StreetStyle::Dutch,
        }
    }
}

/// A US state with the telephone area codes used for its towns.
pub struct State {
    /// Postal abbreviation.
    pub code: &'static str,
    /// Relative size (towns per state).
    weight: f64,
    /// NANP area codes (real geographic codes; the subscriber part is always 555-01xx).
    pub area_codes: &'static [&'static str],
}

/// US states used for invented towns.
#[rustfmt::skip]
pub const STATES: &[State] = &[
    State {
        code: "CA",
        weight: 12.0,
        area_codes: &[
            "209", "213", "310", "408", "415", "510", "530", "559", "562", "619", "626", "650",
            "707", "714", "760", "805", "818", "858", "909", "916", "949", "951",
        ],
    },
    State {
        code: "TX",
        weight: 9.0,
        area_codes: &[
            "210", "214", "254", "281", "325", "361", "409", "432", "512", "713", "806", "817",
            "830", "832", "903", "915", "936", "940", "956", "972", "979",
        ],
    },
    State {
        code: "FL",
        weight: 7.0,
        area_codes: &[
            "239", "305", "321", "352", "386", "407", "561", "727", "772", "786", "813", "850",
            "863", "904", "941", "954",
        ],
    },
    State {
        code: "NY",
        weight: 6.0,
        area_codes: &[
            "212", "315", "347", "516", "518", "585", "607", "631", "716", "718", "845", "914",
            "917",
        ],
    },
    State {
        code: "PA",
        weight: 4.0,
        area_codes: &[
            "215", "267", "412", "484", "570", "610", "717", "724", "814",
        ],
    },
    State {
        code: "IL",
        weight: 4.0,
        area_codes: &[
            "217", "224", "309", "312", "618", "630", "708", "773", "815", "847",
        ],
    },
    State {
        code: "OH",
        weight: 3.5,
        area_codes: &[
            "216", "234", "330", "419", "440", "513", "567", "614", "740", "937",
        ],
    },
    State {
        code: "GA",
        weight: 3.0,
        area_codes: &["229", "404", "470", "478", "678", "706", "770", "912"],
    },
    State {
        code: "NC",
        weight: 3.0,
        area_codes: &["252", "336", "704", "828", "910", "919", "980"],
    },
    State {
        code: "MI",
        weight: 3.0,
        area_codes: &[
            "231", "248", "269", "313", "517", "586", "616", "734", "810", "906", "989",
        ],
    },
    State {
        code: "NJ",
        weight: 3.0,
        area_codes: &[
            "201", "551", "609", "732", "848", "856", "862", "908", "973",
        ],
    },
    State {
        code: "VA",
        weight: 2.5,
        area_codes: &["276", "434", "540", "571", "703", "757", "804"],
    },
    State {
        code: "WA",
        weight: 2.3,
        area_codes: &["206", "253", "360", "425", "509"],
    },
    State {
        code: "AZ",
        weight: 2.2,
        area_codes: &["480", "520", "602", "623", "928"],
    },
    State {
        code: "MA",
        weight: 2.1,
        area_codes: &[
            "339", "351", "413", "508", "617", "774", "781", "857", "978",
        ],
    },
    State {
        code: "TN",
        weight: 2.0,
        area_codes: &["423", "615", "731", "865", "901", "931"],
    },
    State {
        code: "IN",
        weight: 2.0,
        area_codes: &["219", "260", "317", "574", "765", "812"],
    },
    State {
        code: "MO",
        weight: 1.8,
        area_codes: &["314", "417", "573", "636", "660", "816"],
    },
    State {
        code: "MD",
        weight: 1.8,
        area_codes: &["240", "301", "410", "443"],
    },
    State {
        code: "WI",
        weight: 1.7,
        area_codes: &["262", "414", "608", "715", "920"],
    },
    State {
        code: "CO",
        weight: 1.7,
        area_codes: &["303", "719", "720", "970"],
    },
    State {
        code: "MN",
        weight: 1.7,
        area_codes: &["218", "320", "507", "612", "651", "763", "952"],
    },
    State {
        code: "OR",
        weight: 1.2,
        area_codes: &["503", "541", "971"],
    },
    State {
        code: "UT",
        weight: 1.0,
        area_codes: &["385", "435", "801"],
    },
    State {
        code: "NV",
        weight: 1.0,
        area_codes: &["702", "725", "775"],
    },
    State {
        code: "NM",
        weight: 0.6,
        area_codes: &["505", "575"],
    },
    State {
        code: "ME",
        weight: 0.4,
        area_codes: &["207"],
    },
    State {
        code: "VT",
        weight: 0.3,
        area_codes: &["802"],
    },
];

/// An invented town.
#[derive(Debug, Clone)]
pub struct Town {
    /// Town name.
    pub name: String,
    /// US state (index into [`STATES`]); `None` outside the US.
    pub state: Option<usize>,
    /// The town's postcodes (one to four).
    pub postcodes: Vec<String>,
}

/// Street-naming conventions.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum StreetStyle {
    Us,
    British,
    German,
    French,
    Spanish,
    Dutch,
}

/// Street types per style: (long form, abbreviation).
fn street_kinds(style: StreetStyle) -> &'static [(&'static str, &'static str)] {
    match style {
        StreetStyle::Us => &[
            ("Street", "St"),
            ("Avenue", "Ave"),
            ("Road", "Rd"),
            ("Lane", "Ln"),
            ("Drive", "Dr"),
            ("Court", "Ct"),
            ("Place", "Pl"),
            ("Boulevard", "Blvd"),
            ("Way", "Way"),
            ("Circle", "Cir"),
            ("Terrace", "Ter"),
        ],
        StreetStyle::British => &[
            ("Road", "Rd"),
            ("Street", "St"),
            ("Lane", "Ln"),
            ("Close", "Cl"),
            ("Crescent", "Cres"),
            ("Avenue", "Ave"),
            ("Gardens", "Gdns"),
            ("Grove", "Gr"),
            ("Way", "Way"),
            ("Drive", "Dr"),
            ("Mews", "Mews"),
            ("Terrace", "Terr"),
        ],
        StreetStyle::German => &[
            ("straße", "str."),
            ("weg", "weg"),
            ("gasse", "g."),
            ("allee", "allee"),
            ("ring", "ring"),
            ("platz", "pl."),
            ("steig", "steig"),
            ("damm", "damm"),
        ],
        StreetStyle::French => &[
            ("rue", "r."),
            ("avenue", "av."),
            ("boulevard", "bd"),
            ("chemin", "ch."),
            ("allée", "all."),
            ("impasse", "imp."),
            ("place", "pl."),
            ("route", "rte"),
        ],
        StreetStyle::Spanish => &[
            ("Calle", "C/"),
            ("Avenida", "Avda."),
            ("Plaza", "Pza."),
            ("Paseo", "Pº"),
            ("Camino", "Cno."),
            ("Ronda", "Rda."),
            ("Travesía", "Trav."),
        ],
        StreetStyle::Dutch => &[
            ("straat", "str."),
            ("laan", "ln"),
            ("weg", "weg"),
            ("plein", "pl."),
            ("gracht", "gr."),
            ("kade", "kade"),
            ("singel", "singel"),
            ("hof", "hof"),
        ],
    }
}

/// Word stems for street names per style.
#[rustfmt::skip]
fn street_stems(style: StreetStyle) -> &'static [&'static str] {
    match style {
        StreetStyle::Us | StreetStyle::British => &[
            "Maple", "Cedar", "Willow", "Juniper", "Heron", "Lantern", "Quarry", "Bramble",
            "Thistle", "Meadow", "Orchard", "Foxglove", "Harbor", "Kestrel", "Larch", "Mill",
            "Rowan", "Sparrow", "Sumac", "Tamarack", "Birch", "Hazel", "Linden", "Copper",
            "Falcon", "Holly", "Ivy", "Laurel", "Magnolia", "Poplar", "Spruce", "Sycamore",
            "Alder", "Aspen", "Beacon", "Clover", "Elder", "Fern", "Glen", "Heather", "Iris",
            "Jasper", "Kingfisher", "Lark", "Marigold", "Nettle", "Oak", "Pine", "Quill",
            "Raven", "Sage", "Teal", "Vale", "Wren", "Yarrow", "Maple Ridge", "Cedar Hollow",
            "Willow Creek", "Heron Brook", "Lantern Hill", "Stone Field", "Bramble Wood",
            "Orchard Spring", "Fox Hollow", "Kettle Pond", "Tinker's", "St. Aldwyn's",
        ],
        StreetStyle::German => &[
            "Linden", "Birken", "Eichen", "Ahorn", "Buchen", "Tannen", "Rosen", "Tulpen",
            "Veilchen", "Mühlen", "Brunnen", "Kirch", "Schul", "Garten", "Wiesen", "Feld",
            "Berg", "Wald", "Bach", "Sonnen", "Amsel", "Drossel", "Finken", "Lerchen", "Meisen",
            "Falken", "Hasel", "Holunder", "Kastanien", "Erlen", "Eschen", "Weiden", "Kiefern",
            "Fichten", "Schlehen", "Quitten", "Hopfen", "Flachs", "Mühlbach", "Am Anger ",
            "Fliederhof", "Sägewerk", "Kräuter", "Öhler",
        ],
        StreetStyle::French => &[
            "des Tilleuls", "du Moulin", "de la Forge", "de la Fontaine", "des Cerisiers",
            "des Lavandes", "des Peupliers", "des Chênes", "des Hirondelles", "des Vignes",
            "des Prés", "des Sources", "des Marronniers", "des Roseaux", "des Lilas",
            "des Acacias", "des Mésanges", "des Coquelicots", "des Genêts", "des Bruyères",
            "des Écoles", "des Jardins", "des Platanes", "des Saules", "de l'Étang",
            "de la Croix Blanche", "du Verger", "du Lavoir", "de la Source", "du Château d'Eau",
            "des Quatre Vents", "du Pressoir",
        ],
        StreetStyle::Spanish => &[
            "del Olivo", "de los Almendros", "de la Sierra", "del Pinar", "de las Acacias",
            "de la Fuente", "del Molino", "de los Naranjos", "del Roble", "de la Alameda",
            "de las Golondrinas", "del Mirador", "de la Ermita", "del Castaño", "de los Sauces",
            "de las Flores", "del Limonero", "de la Viña", "del Huerto", "de la Atalaya",
            "de los Tilos", "del Cierzo", "de la Noria", "del Brezo",
        ],
        StreetStyle::Dutch => &[
            "Linden", "Berken", "Eiken", "Beuken", "Wilgen", "Populieren", "Kastanje",
            "Esdoorn", "Iepen", "Vlier", "Meidoorn", "Hazelaar", "Molen", "Kerk", "School",
            "Tuin", "Veld", "Dijk", "Sluis", "Haven", "Zwanen", "Reiger", "Meeuwen", "Merel",
            "Lijster", "Kievit", "Vinken", "Spreeuwen", "Zonnebloem", "Tulp", "IJsvogel",
        ],
    }
}

/// Word pools for town names per country: (first parts, second parts, join with space?).
#[rustfmt::skip]
fn town_parts(country: Country) -> (&'static [&'static str], &'static [&'static str]) {
    const GERMAN_A: &[&str] = &[
        "Alt", "Birk", "Eich", "Eschen", "Fels", "Grün", "Hasel", "Hohen", "Kirch", "Linden",
        "Mühl", "Neu", "Ober", "Rosen", "Sand", "Stein", "Tann", "Unter", "Wald", "Weiden",
        "Wiesen", "Quell", "Buch", "Lauter", "Schön", "Rot", "Erl",
    ];
    const GERMAN_B: &[&str] = &[
        "au", "bach", "berg", "born", "brück", "burg", "dorf", "feld", "furt", "hagen",
        "hausen", "heim", "hof", "ingen", "rode", "stadt", "tal", "weiler", "winkel", "kirchen",
    ];
    const FRENCH_A: &[&str] = &[
        "Beau", "Belle", "Bois", "Champ", "Clair", "Font", "Haute", "Long", "Roche", "Val",
        "Pré", "Fleur", "Mar", "Ros", "Vern", "Mous", "Cour", "Sauve", "Saint-Aub",
        "Sainte-Col", "Quincy",
    ];
    const FRENCH_B: &[&str] = &[
        "lieu", "mont", "ville", "court", "fort", "champ", "fontaine", "val", "bois",
        "-les-Pins", "-sur-Orne", "-en-Brie", "-la-Forêt", "-le-Château", "ac", "ay", "ignac",
        "igny", "ières", "-sur-Loue",
    ];
    match country {
        Country::Us => (
            &[
                "Ash", "Birch", "Bramble", "Briar", "Cedar", "Clover", "Copper", "Elder", "Elm",
                "Fair", "Fern", "Glen", "Hazel", "Heron", "Holly", "Iron", "Juniper", "Kestrel",
                "Lark", "Laurel", "Maple", "Marsh", "Mill", "North", "Oak", "Pine", "Quill",
                "Red", "Rowan", "Sage", "Silver", "Spring", "Stone", "Thistle", "West",
                "Willow", "Wren", "Amber", "Bell", "Crane",
            ],
            &[
                "brook", "bury", "dale", "field", "ford", "gate", "haven", "hollow", "mont",
                "port", "ridge", "ton", "vale", "view", "ville", "wood", " Falls", " Springs",
                " Crossing", " Junction", " Harbor", " Heights",
            ],
        ),
        Country::Gb => (
            &[
                "Ash", "Bram", "Brack", "Cold", "Crow", "Ess", "Fen", "Gos", "Hazel", "Holm",
                "Kex", "Lang", "Lin", "Mar", "Nether", "Pen", "Quen", "Rad", "Salt", "Shep",
                "Thorn", "Up", "Wick", "Wold", "Bex", "Cray", "Dun", "Elm", "Fox", "Gren",
            ],
            &[
                "bury", "by", "combe", "don", "field", "ham", "hurst", "ley", "mere", "minster",
                "ness", "stead", "stow", "thorpe", "ton", "wick", "worth", "ing", "bridge",
                "chester",
            ],
        ),
        Country::Ie => (
            &[
                "Bally", "Kil", "Carrig", "Dun", "Lis", "Clon", "Rath", "Ard", "Inish", "Knock",
                "Glen", "Drum", "Tulla", "Mullin", "Kin",
            ],
            &[
                "more", "ane", "beg", "derry", "dore", "garry", "kee", "lea", "mona", "nagh",
                "owen", "rush", "cloon", "field", "hill",
            ],
        ),
        Country::De | Country::At => (GERMAN_A, GERMAN_B),
        Country::Ch => (GERMAN_A, GERMAN_B),
        Country::Fr => (FRENCH_A, FRENCH_B),
        Country::Es => (
            &[
                "Villa", "Castro", "Torre", "Valde", "Fuente", "Monte", "Albo", "Mira", "Peña",
                "Ala", "Campo", "Casa",
            ],
            &[
                "nueva", "alta", "blanca", "verde", "rubia", "flores", "mar", "sol", "llano",
                "molinos", "seca", "fría", "real", "nueva del Río", "rubia de la Sierra",
                "alta del Campo", "seca de Abajo", "verde de Arriba",
            ],
        ),
        Country::Nl => (
            &[
                "Ooster", "Wester", "Noord", "Zuid", "Hoog", "Laag", "Nieuw", "Oud", "Groen",
                "Berg", "Beek", "Bosch", "Brug", "Dijk", "Haar", "Heem", "Hout", "IJssel",
                "Maas", "Zand",
            ],
            &[
                "dam", "dijk", "veen", "wijk", "hoven", "horst", "broek", "loo", "hout",
                "zande", "kerk", "woude", "meer", "geest", "huizen", "hem", "stede", "drecht",
            ],
        ),
    }
}

/// Number of invented towns per country.
fn town_count(country: Country) -> usize {
    match country {
        Country::Us => 400,
        Country::Gb => 250,
        Country::Ie => 80,
        Country::De => 300,
        Country::At => 80,
        Country::Ch => 80,
        Country::Fr => 200,
        Country::Es => 200,
        Country::Nl => 150,
    }
}

/// GB postcode areas used for outward codes (real area letters, invented districts).
const GB_AREAS: &[&str] = &[
    "AB", "B", "BS", "CF", "CB", "CT", "DE", "DN", "EH", "EX", "G", "GL", "HU", "IP", "L", "LE",
    "LS", "M", "NE", "NG", "NR", "OX", "PL", "PO", "RG", "S", "SO", "ST", "TN", "YO",
];

/// Letters allowed in the inward part of a GB postcode.
const GB_INWARD: &[u8] = b"ABDEFGHJLNPQRSTUWXYZ";
/// Letters and digits allowed in Eircode unique identifiers.
const EIRCODE: &[u8] = b"ACDEFHKNPRTVWXY0123456789";
/// Letters used in Dutch postcodes.
const NL_LETTERS: &[u8] = b"ABCDEGHJKLMNPRSTVWXZ";

fn digits(rng: &mut Rng, n: usize) -> String {
    (0..n)
        .map(|_| char::from(b'0' + rng.below(10) as u8))
        .collect()
}

/// Build the towns of a country from the fixed internal seed.
fn build_towns(country: Country) -> Vec<Town> {
    let mut rng = Rng::new(stable_hash(b"quillberry-towns") ^ (country.index() as u64 + 1));
    let (firsts, seconds) = town_parts(country);
    let n = town_count(country).min(firsts.len() * seconds.len());
    let mut names: Vec<String> = Vec::with_capacity(n);
    let mut used_prefix: Vec<String> = Vec::with_capacity(n);
    let total_weight: f64 = STATES.iter().map(|s| s.weight).sum();
    let mut towns = Vec::with_capacity(n);
    let mut guard = 0;
    while towns.len() < n && guard < 1_000_000 {
        guard += 1;
        let a = *rng.pick(firsts);
        let b = *rng.pick(seconds);
        if b.to_lowercase().starts_with(&a.to_lowercase()) {
            continue;
        }
        let name = if country == Country::Ch && rng.chance(0.3) {
            // French-speaking Swiss towns.
            let fa = town_parts(Country::Fr);
            format!("{}{}", rng.pick(fa.0), rng.pick(fa.1))
        } else {
            format!("{a}{b}")
        };
        if names.contains(&name) {
            continue;
        }
        // A postcode prefix unique to the town.
        let prefix = match country {
            Country::Gb => format!("{}{}", rng.pick(GB_AREAS), 1 + rng.below(29)),
            Country::Ie => format!(
                "{}{}",
                char::from(*rng.pick(b"ACDEFHKNPRTVWXY")),
                digits(&mut rng, 2)
            ),
            Country::Es => format!("{:02}{}", 1 + rng.below(52), rng.below(10)),
            Country::Fr => format!("{:02}{}", 1 + rng.below(95), rng.below(10)),
            Country::At | Country::Ch | Country::Nl => format!("{}", 100 + rng.below(900)),
            Country::Us | Country::De => format!("{:03}", 10 + rng.below(990)),
        };
        if used_prefix.contains(&prefix) {
            continue;
        }
        let state = if country == Country::Us {
            let mut u = rng.next_f64() * total_weight;
            let mut idx = 0;
            for (i, s) in STATES.iter().enumerate() {
                if u < s.weight {
                    idx = i;
                    break;
                }
                u -= s.weight;
            }
            Some(idx)
        } else {
            None
        };
        let count = 1 + rng.below(4) as usize;
        let mut postcodes: Vec<String> = Vec::with_capacity(count);
        for _ in 0..count {
            let code = match country {
                Country::Us | Country::De | Country::Es => {
                    format!("{prefix}{}", digits(&mut rng, 2))
                }
                Country::Fr => format!("{prefix}{}0", rng.below(10)),
                Country::At | Country::Ch => format!("{prefix}{}", rng.below(10)),
                Country::Nl => format!("{prefix}{}", rng.below(10)),
                Country::Gb | Country::Ie => prefix.clone(),
            };
            if !postcodes.contains(&code) {
                postcodes.push(code);
            }
        }
        used_prefix.push(prefix);
        names.push(name.clone());
        towns.push(Town {
            name,
            state,
            postcodes,
        });
    }
    towns
}

/// The invented towns of `country` (the same for every seed).
pub fn towns(country: Country) -> &'static [Town] {
    static TOWNS: OnceLock<Vec<Vec<Town>>> = OnceLock::new();
    &TOWNS.get_or_init(|| Country::ALL.iter().map(|&c| build_towns(c)).collect())[country.index()]
}

/// A street address.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Address {
    /// Country.
    pub country: Country,
    /// Index of the town in [`towns`].
    pub town: usize,
    /// Street name stem (without the street type).
    pub stem: &'static str,
    /// Index of the street type in the country's street kinds.
    pub kind: usize,
    /// House number as written ("12", "12a", "3 bis").
    pub number: String,
    /// Flat or unit ("4B", "2"), if any.
    pub unit: Option<String>,
    /// Full postcode.
    pub postcode: String,
}

impl Address {
    /// A random address in a random town of `country` (larger towns are more likely).
    pub fn random(rng: &mut Rng, country: Country) -> Address {
        let list = towns(country);
        let town = skewed_index(rng, list.len());
        Address::random_in(rng, country, town)
    }

    /// A random address in town `town` of `country`.
    pub fn random_in(rng: &mut Rng, country: Country, town: usize) -> Address {
        let t = &towns(country)[town];
        let style = country.street_style();
        let stem = *rng.pick(street_stems(style));
        let kind = rng.below(street_kinds(style).len() as u64) as usize;
        let (number, unit) = match style {
            StreetStyle::Us => {
                let n = if rng.chance(0.7) {
                    100 + rng.below(9900)
                } else {
                    1 + rng.below(99)
                };
                let unit = rng.chance(0.15).then(|| {
                    if rng.chance(0.5) {
                        format!("{}", 1 + rng.below(40))
                    } else {
                        format!(
                            "{}{}",
                            1 + rng.below(9),
                            char::from(b'A' + rng.below(6) as u8)
                        )
                    }
                });
                (n.to_string(), unit)
            }
            StreetStyle::British => {
                let n = 1 + rng.below(240);
                let unit = rng.chance(0.12).then(|| format!("{}", 1 + rng.below(12)));
                (n.to_string(), unit)
            }
            StreetStyle::German | StreetStyle::Dutch => {
                let n = 1 + rng.below(150);
                let number = if rng.chance(0.1) {
                    format!("{n}{}", char::from(b'a' + rng.below(4) as u8))
                } else {
                    n.to_string()
                };
                let unit = (country == Country::At && rng.chance(0.5))
                    .then(|| format!("{}", 1 + rng.below(20)));
                (number, unit)
            }
            StreetStyle::French => {
                let n = 1 + rng.below(200);
                let number = if rng.chance(0.05) {
                    format!("{n} bis")
                } else {
                    n.to_string()
                };
                (number, None)
            }
            StreetStyle::Spanish => {
                let n = 1 + rng.below(150);
                let unit = rng.chance(0.7).then(|| {
                    format!(
                        "{}º {}",
                        1 + rng.below(9),
                        char::from(b'A' + rng.below(4) as u8)
                    )
                });
                (n.to_string(), unit)
            }
        };
        let postcode = {
            let base = rng.pick(&t.postcodes).clone();
            match country {
                Country::Gb => format!(
                    "{base} {}{}{}",
                    rng.below(10),
                    char::from(*rng.pick(GB_INWARD)),
                    char::from(*rng.pick(GB_INWARD))
                ),
                Country::Ie => {
                    let id: String = (0..4).map(|_| char::from(*rng.pick(EIRCODE))).collect();
                    format!("{base} {id}")
                }
                Country::Nl => format!(
                    "{base} {}{}",
                    char::from(*rng.pick(NL_LETTERS)),
                    char::from(*rng.pick(NL_LETTERS))
                ),
                _ => base,
            }
        };
        Address {
            country,
            town,
            stem,
            kind,
            number,
            unit,
            postcode,
        }
    }

    /// The town.
    pub fn town(&self) -> &'static Town {
        &towns(self.country)[self.town]
    }

    /// The US state code, or "" outside the US.
    pub fn state(&self) -> &'static str {
        self.town().state.map(|s| STATES[s].code).unwrap_or("")
    }

    /// The street name, with the street type written in full or abbreviated.
    pub fn street_name(&self, abbreviated: bool) -> String {
        let style = self.country.street_style();
        let (long, short) = street_kinds(style)[self.kind];
        let kind = if abbreviated { short } else { long };
        match style {
            StreetStyle::Us | StreetStyle::British => format!("{} {kind}", self.stem),
            StreetStyle::German | StreetStyle::Dutch => {
                if self.stem.ends_with(' ') {
                    // "Am Anger " + "weg" is not a word: keep such stems as they are.
                    self.stem.trim_end().to_string()
                } else {
                    format!("{}{kind}", self.stem)
                }
            }
            StreetStyle::French | StreetStyle::Spanish => format!("{kind} {}", self.stem),
        }
    }

    /// The street line (number, street, unit) in the country's usual order.
    pub fn street_line(&self, abbreviated: bool) -> String {
        let street = self.street_name(abbreviated);
        let n = &self.number;
        match (self.country.street_style(), &self.unit) {
            (StreetStyle::Us, None) => format!("{n} {street}"),
            (StreetStyle::Us, Some(u)) => {
                let label = if abbreviated { "#" } else { "Apt " };
                format!("{n} {street} {label}{u}")
            }
            (StreetStyle::British, None) => format!("{n} {street}"),
            (StreetStyle::British, Some(u)) => format!("Flat {u}, {n} {street}"),
            (StreetStyle::German | StreetStyle::Dutch, None) => format!("{street} {n}"),
            (StreetStyle::German | StreetStyle::Dutch, Some(u)) => format!("{street} {n}/{u}"),
            (StreetStyle::French, _) => format!("{n} {street}"),
            (StreetStyle::Spanish, None) => format!("{street}, {n}"),
            (StreetStyle::Spanish, Some(u)) => {
                if abbreviated {
                    format!("{street} {n} {}", u.replace(' ', ""))
                } else {
                    format!("{street}, {n}, {u}")
                }
            }
        }
    }

    /// A different address of someone who moved: usually in the same town.
    pub fn moved(&self, rng: &mut Rng) -> Address {
        loop {
            let next = if rng.chance(0.6) {
                Address::random_in(rng, self.country, self.town)
            } else {
                Address::random(rng, self.country)
            };
            if next.street_line(false) != self.street_line(false) {
                return next;
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn country_shares_sum_to_one() {
        let s: f64 = Country::ALL.iter().map(|c| c.share()).sum();
        assert!((s - 1.0).abs() < 1e-9);
        for (i, c) in Country::ALL.iter().enumerate() {
            assert_eq!(c.index(), i);
        }
    }

    #[test]
    fn towns_are_unique_and_stable() {
        for c in Country::ALL {
            let t = towns(c);
            assert_eq!(t.len(), town_count(c), "{c:?}");
            let mut names: Vec<&str> = t.iter().map(|t| t.name.as_str()).collect();
            names.sort_unstable();
            names.dedup();
            assert_eq!(names.len(), t.len(), "{c:?}");
            assert!(t.iter().all(|t| !t.postcodes.is_empty()));
            assert_eq!(build_towns(c)[0].name, t[0].name);
        }
    }

    #[test]
    fn postcodes_follow_country_formats() {
        let mut rng = Rng::new(11);
        for _ in 0..2000 {
            for c in Country::ALL {
                let a = Address::random(&mut rng, c);
                let p = &a.postcode;
                let ok = match c {
                    Country::Us | Country::De | Country::Fr | Country::Es => {
                        p.len() == 5 && p.bytes().all(|b| b.is_ascii_digit())
                    }
                    Country::At | Country::Ch => {
                        p.len() == 4 && p.bytes().all(|b| b.is_ascii_digit())
                    }
                    Country::Nl => {
                        p.len() == 7
                            && p[..4].bytes().all(|b| b.is_ascii_digit())
                            && p[5..].bytes().all(|b| b.is_ascii_uppercase())
                    }
                    Country::Gb => {
                        let (out, inw) = p.split_once(' ').unwrap();
                        (2..=4).contains(&out.len()) && inw.len() == 3
                    }
                    Country::Ie => p.len() == 8 && p.as_bytes()[3] == b' ',
                };
                assert!(ok, "{c:?} {p}");
                assert_eq!(a.state().is_empty(), c != Country::Us);
            }
        }
    }

    #[test]
    fn street_lines_look_right() {
        let a = Address {
            country: Country::De,
            town: 0,
            stem: "Linden",
            kind: 0,
            number: "12".into(),
            unit: None,
            postcode: "10115".into(),
        };
        assert_eq!(a.street_line(false), "Lindenstraße 12");
        assert_eq!(a.street_line(true), "Lindenstr. 12");
        let us = Address {
            country: Country::Us,
            stem: "Maple Ridge",
            kind: 2,
            number: "1234".into(),
            unit: Some("4B".into()),
            ..a.clone()
        };
        assert_eq!(us.street_line(false), "1234 Maple Ridge Road Apt 4B");
        assert_eq!(us.street_line(true), "1234 Maple Ridge Rd #4B");
        let fr = Address {
            country: Country::Fr,
            stem: "des Tilleuls",
            kind: 0,
            number: "3 bis".into(),
            unit: None,
            ..a
        };
        assert_eq!(fr.street_line(false), "3 bis rue des Tilleuls");
    }

    #[test]
    fn moved_address_differs() {
        let mut rng = Rng::new(5);
        for c in Country::ALL {
            let a = Address::random(&mut rng, c);
            let b = a.moved(&mut rng);
            assert_ne!(a.street_line(false), b.street_line(false));
            assert_eq!(a.country, b.country);
        }
    }
}
