//! Invented name vocabulary for the synthetic customers.
//!
//! In: a culture and a random generator. Out: given names (with sex), family names,
//! nicknames, titles and suffixes. The lists hold common given and family names of
//! several European languages as plain vocabulary; rare family names are composed from
//! syllables so that the population has a long tail. No list holds a real person's
//! record: a name is combined at random with an invented address, birth date, phone
//! and e-mail.

use std::collections::HashMap;
use std::sync::OnceLock;

use crate::util::Rng;

/// Sex of a generated person (chooses given names and courtesy titles).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Sex {
    /// Female.
    Female,
    /// Male.
    Male,
}

/// Naming culture of a generated person.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Culture {
    /// English names (US, GB).
    English,
    /// Irish names (IE).
    Irish,
    /// German names (DE, AT, CH).
    German,
    /// French names (FR, CH).
    French,
    /// Spanish names (ES, some US), usually with two family names.
    Spanish,
    /// Dutch names (NL), often with particles (van, de, van der).
    Dutch,
}

/// The name lists of one culture.
struct Pools {
    female: &'static [&'static str],
    male: &'static [&'static str],
    family: &'static [&'static str],
    rare_first: &'static [&'static str],
    rare_second: &'static [&'static str],
    courtesy_female: &'static [&'static str],
    courtesy_male: &'static [&'static str],
    academic: &'static [&'static str],
}

#[rustfmt::skip]
const ENGLISH: Pools = Pools {
    female: &[
        "Mary", "Patricia", "Jennifer", "Linda", "Elizabeth", "Barbara", "Susan", "Jessica",
        "Sarah", "Karen", "Nancy", "Lisa", "Margaret", "Betty", "Sandra", "Ashley", "Dorothy",
        "Kimberly", "Emily", "Donna", "Michelle", "Carol", "Amanda", "Melissa", "Deborah",
        "Stephanie", "Rebecca", "Laura", "Sharon", "Cynthia", "Kathleen", "Amy", "Shirley",
        "Angela", "Helen", "Anna", "Brenda", "Pamela", "Nicole", "Samantha", "Katherine",
        "Emma", "Rachel", "Christine", "Catherine", "Victoria", "Olivia", "Sophie", "Charlotte",
        "Hannah", "Abigail", "Megan", "Lauren", "Chloe", "Grace", "Alice", "Judith", "Joanne",
        "Jacqueline", "Heather", "Anne-Marie", "Zoë",
    ],
    male: &[
        "James", "John", "Robert", "Michael", "William", "David", "Richard", "Joseph", "Thomas",
        "Charles", "Christopher", "Daniel", "Matthew", "Anthony", "Mark", "Donald", "Steven",
        "Paul", "Andrew", "Joshua", "Kenneth", "Kevin", "Brian", "George", "Timothy", "Ronald",
        "Edward", "Jason", "Jeffrey", "Ryan", "Jacob", "Gary", "Nicholas", "Eric", "Jonathan",
        "Stephen", "Larry", "Justin", "Scott", "Brandon", "Benjamin", "Samuel", "Gregory",
        "Alexander", "Patrick", "Frank", "Raymond", "Jack", "Dennis", "Jerry", "Oliver",
        "Harry", "Henry", "Peter", "Simon", "Graham", "Nigel", "Philip", "Adrian", "Martin",
    ],
    family: &[
        "Smith", "Johnson", "Williams", "Brown", "Jones", "Miller", "Davis", "Wilson",
        "Anderson", "Taylor", "Thomas", "Moore", "Jackson", "Martin", "Lee", "Thompson",
        "White", "Harris", "Clark", "Lewis", "Robinson", "Walker", "Young", "Allen", "King",
        "Wright", "Scott", "Hill", "Green", "Adams", "Baker", "Nelson", "Carter", "Mitchell",
        "Roberts", "Turner", "Phillips", "Campbell", "Parker", "Evans", "Edwards", "Collins",
        "Stewart", "Morris", "Rogers", "Reed", "Cook", "Morgan", "Bell", "Cooper", "Richardson",
        "Cox", "Howard", "Ward", "Peterson", "Gray", "Watson", "Brooks", "Kelly", "Sanders",
        "Price", "Bennett", "Wood", "Barnes", "Ross", "Henderson", "Coleman", "Jenkins",
        "Perry", "Powell", "Long", "Patterson", "Hughes", "Foster", "Butler", "Simmons",
        "Bryant", "Russell", "Griffin", "Hayes", "Myers", "Ford", "Hamilton", "Graham",
        "Sullivan", "Wallace", "Woods", "Cole", "West", "Jordan", "Owens", "Reynolds", "Fisher",
        "Ellis", "Harrison", "Gibson", "McDonald", "Marshall", "Murray", "Shaw", "Holmes",
        "Palmer", "Lloyd", "Fletcher", "Chapman", "O'Connor", "MacLeod", "Smith-Jones",
        "Fairweather", "Pemberton", "St. John",
    ],
    rare_first: &[
        "Ash", "Black", "Brad", "Brook", "Craw", "Dun", "Fair", "Green", "Hal", "Hart", "Holl",
        "Kings", "Lang", "Mar", "Mid", "Nor", "Pen", "Rad", "Red", "Shel", "Stan", "Thorn",
        "Wake", "Went", "Whit", "Wood", "Quill", "Tams",
    ],
    rare_second: &[
        "ford", "ley", "ton", "wood", "field", "worth", "by", "ham", "well", "wick", "more",
        "stone", "bridge", "hurst", "combe", "dale",
    ],
    courtesy_female: &["Mrs", "Ms", "Miss", "Mrs.", "Ms."],
    courtesy_male: &["Mr", "Mr."],
    academic: &["Dr.", "Dr", "Prof.", "Rev."],
};

#[rustfmt::skip]
const IRISH: Pools = Pools {
    female: &[
        "Aoife", "Siobhán", "Niamh", "Saoirse", "Róisín", "Orla", "Ciara", "Sinéad", "Máire",
        "Clodagh", "Aisling", "Caoimhe", "Gráinne", "Deirdre", "Maeve", "Eimear", "Áine",
        "Bríd", "Nora", "Sorcha", "Mary", "Margaret", "Catherine", "Emma", "Sarah",
    ],
    male: &[
        "Seán", "Ciarán", "Pádraig", "Eoin", "Cian", "Declan", "Oisín", "Darragh", "Conor",
        "Liam", "Cathal", "Colm", "Dónal", "Fergal", "Niall", "Ruairí", "Tadhg", "Diarmuid",
        "Séamus", "Brendan", "Michael", "John", "Patrick", "James", "Thomas",
    ],
    family: &[
        "Murphy", "Kelly", "O'Sullivan", "Walsh", "Smith", "O'Brien", "Byrne", "Ryan",
        "O'Connor", "O'Neill", "O'Reilly", "Doyle", "McCarthy", "Gallagher", "O'Doherty",
        "Kennedy", "Lynch", "Murray", "Quinn", "Moore", "McLoughlin", "O'Carroll", "Connolly",
        "Daly", "O'Connell", "Wilson", "Dunne", "Brennan", "Burke", "Collins", "Campbell",
        "Clarke", "Johnston", "Hughes", "O'Farrell", "Fitzgerald", "Brown", "Martin", "Maguire",
        "Nolan", "Flynn", "Thompson", "O'Callaghan", "O'Donnell", "Duffy", "Mahony",
        "Ó Ceallaigh", "Mac Cárthaigh", "Ní Bhriain",
    ],
    rare_first: &[
        "O'Bran", "O'Carr", "McCull", "O'Dar", "McFenn", "O'Gall", "McKeel", "O'Lon", "McMull",
        "O'Nee", "McQuill", "O'Shan", "McTier",
    ],
    rare_second: &["agh", "an", "ey", "ihan", "ane", "igan", "ery"],
    courtesy_female: &["Mrs", "Ms", "Miss"],
    courtesy_male: &["Mr"],
    academic: &["Dr.", "Dr", "Prof."],
};

#[rustfmt::skip]
const GERMAN: Pools = Pools {
    female: &[
        "Anna", "Maria", "Ursula", "Monika", "Petra", "Elisabeth", "Sabine", "Renate", "Helga",
        "Karin", "Brigitte", "Ingrid", "Erika", "Andrea", "Gisela", "Claudia", "Susanne",
        "Gabriele", "Christa", "Christine", "Stefanie", "Birgit", "Barbara", "Katharina",
        "Julia", "Sandra", "Nicole", "Franziska", "Lena", "Laura", "Lea", "Sophie", "Hannah",
        "Jana", "Jutta", "Bärbel", "Margarete", "Annelie", "Lieselotte", "Hildegard", "Gudrun",
        "Doris", "Heike", "Silke", "Anke", "Tanja", "Martina", "Dörte", "Anne-Kathrin",
    ],
    male: &[
        "Peter", "Michael", "Thomas", "Andreas", "Wolfgang", "Klaus", "Jürgen", "Günter",
        "Stefan", "Christian", "Uwe", "Werner", "Horst", "Frank", "Dieter", "Manfred",
        "Gerhard", "Hans", "Bernd", "Joachim", "Ralf", "Helmut", "Sven", "Matthias",
        "Alexander", "Markus", "Heinz", "Karl", "Josef", "Johann", "Johannes", "Friedrich",
        "Jörg", "Björn", "Lukas", "Jonas", "Leon", "Felix", "Maximilian", "Tobias", "Florian",
        "Sebastian", "Dominik", "Hans-Peter", "Karl-Heinz", "Rüdiger", "Sören", "Günther",
    ],
    family: &[
        "Müller", "Schmidt", "Schneider", "Fischer", "Weber", "Meyer", "Wagner", "Becker",
        "Schulz", "Hoffmann", "Schäfer", "Koch", "Bauer", "Richter", "Klein", "Wolf",
        "Schröder", "Neumann", "Schwarz", "Zimmermann", "Braun", "Krüger", "Hofmann",
        "Hartmann", "Lange", "Schmitt", "Werner", "Schmitz", "Krause", "Meier", "Lehmann",
        "Schmid", "Schulze", "Maier", "Köhler", "Herrmann", "König", "Walter", "Mayer", "Huber",
        "Kaiser", "Fuchs", "Peters", "Lang", "Scholz", "Möller", "Weiß", "Jung", "Hahn",
        "Schubert", "Vogel", "Friedrich", "Keller", "Günther", "Frank", "Berger", "Winkler",
        "Roth", "Beck", "Lorenz", "Baumann", "Franke", "Albrecht", "Schuster", "Simon",
        "Ludwig", "Böhm", "Winter", "Kraus", "Martin", "Schumacher", "Krämer", "Vogt", "Stein",
        "Jäger", "Otto", "Sommer", "Groß", "Seidel", "Heinrich", "Brandt", "Haas", "Schreiber",
        "Graf", "Schulte", "Dietrich", "Ziegler", "Kuhn", "Kühn", "Pohl", "Engel", "Horn",
        "Busch", "Bergmann", "Voigt", "Sauer", "Arnold", "Wolff", "Pfeiffer", "von Bergen",
        "von der Heide", "Straßer", "Nußbaum", "Schmidt-Weber",
    ],
    rare_first: &[
        "Acker", "Alt", "Bach", "Berg", "Brand", "Eisen", "Feld", "Gold", "Grün", "Hoch",
        "Kessel", "Klee", "Lind", "Mühl", "Neu", "Rosen", "Sand", "Schön", "Stein", "Wald",
        "Wein", "Wiesen", "Tann", "Quell",
    ],
    rare_second: &[
        "mann", "meier", "huber", "berger", "hofer", "bauer", "feld", "inger", "ler", "ner",
        "brecht", "hardt", "stätter", "wald", "hauser", "reiter",
    ],
    courtesy_female: &["Frau"],
    courtesy_male: &["Herr"],
    academic: &["Dr.", "Prof. Dr.", "Dr.-Ing.", "Dipl.-Ing.", "Dr"],
};

#[rustfmt::skip]
const FRENCH: Pools = Pools {
    female: &[
        "Marie", "Nathalie", "Isabelle", "Sylvie", "Catherine", "Françoise", "Christine",
        "Monique", "Valérie", "Sandrine", "Véronique", "Nicole", "Sophie", "Céline", "Chantal",
        "Stéphanie", "Martine", "Camille", "Léa", "Manon", "Chloé", "Émilie", "Julie",
        "Aurélie", "Hélène", "Cécile", "Élodie", "Mathilde", "Margaux", "Inès", "Anaïs",
        "Noémie", "Clémence", "Geneviève", "Brigitte", "Juliette", "Marie-Claire",
        "Anne-Sophie",
    ],
    male: &[
        "Jean", "Pierre", "Michel", "Philippe", "Alain", "Nicolas", "Christophe", "Patrick",
        "Daniel", "Bernard", "Éric", "Laurent", "Frédéric", "Stéphane", "David", "Sébastien",
        "Julien", "Thierry", "Olivier", "François", "Jérôme", "Benoît", "Mathieu", "Guillaume",
        "Antoine", "Hugo", "Théo", "Louis", "Lucas", "Gaël", "Raphaël", "Noël", "Hervé",
        "Jean-Pierre", "Jean-Luc", "Jean-Baptiste", "Rémi", "Cédric", "Loïc", "Maxime",
    ],
    family: &[
        "Martin", "Bernard", "Thomas", "Petit", "Robert", "Richard", "Durand", "Dubois",
        "Moreau", "Laurent", "Simon", "Michel", "Lefèvre", "Leroy", "Roux", "David", "Bertrand",
        "Morel", "Fournier", "Girard", "Bonnet", "Dupont", "Lambert", "Fontaine", "Rousseau",
        "Vincent", "Muller", "Lefebvre", "Faure", "André", "Mercier", "Blanc", "Guérin",
        "Boyer", "Garnier", "Chevalier", "François", "Legrand", "Gauthier", "Garcia", "Perrin",
        "Robin", "Clément", "Morin", "Nicolas", "Henry", "Roussel", "Mathieu", "Gautier",
        "Masson", "Marchand", "Duval", "Denis", "Dumont", "Lemaire", "Noël", "Meyer", "Dufour",
        "Meunier", "Brun", "Blanchard", "Giraud", "Joly", "Rivière", "Lucas", "Brunet",
        "Gaillard", "Barbier", "Arnaud", "Gérard", "Roche", "Renard", "Roy", "Leroux", "Colin",
        "Vidal", "Caron", "Picard", "Fabre", "Aubert", "Lemoine", "Renaud", "Dumas", "Lacroix",
        "Bourgeois", "Leclerc", "Carré", "Ménard", "Prévost", "Lévêque", "Le Gall", "Le Goff",
        "de la Fontaine", "du Pont", "de Villiers", "d'Arcy",
    ],
    rare_first: &[
        "Beau", "Bel", "Bon", "Char", "Chev", "Dela", "Duf", "Fon", "Gar", "Lam", "Lan", "Mar",
        "Mor", "Per", "Ram", "Rou", "Val", "Ver", "Quer",
    ],
    rare_second: &[
        "bert", "don", "eau", "et", "ier", "in", "ot", "ard", "aud", "elle", "ois", "on", "oux",
        "ière",
    ],
    courtesy_female: &["Mme", "Mme.", "Madame", "Mlle"],
    courtesy_male: &["M.", "Monsieur"],
    academic: &["Dr", "Dr.", "Pr"],
};

#[rustfmt::skip]
const SPANISH: Pools = Pools {
    female: &[
        "María", "Carmen", "Ana", "Isabel", "Laura", "Lucía", "Cristina", "Marta", "Pilar",
        "Elena", "Rosa", "Paula", "Sara", "Raquel", "Silvia", "Beatriz", "Patricia", "Mercedes",
        "Rocío", "Dolores", "Teresa", "Sofía", "Alba", "Nuria", "Inés", "Concepción", "Ángela",
        "Julia", "Irene", "Andrea", "Claudia", "Encarnación", "Montserrat", "Begoña", "Lourdes",
        "Guadalupe", "Rosario", "Ainhoa", "María José", "María del Carmen",
    ],
    male: &[
        "Antonio", "José", "Manuel", "Francisco", "David", "Juan", "Javier", "Daniel",
        "José Antonio", "Francisco Javier", "Jesús", "Carlos", "Alejandro", "Miguel",
        "José Luis", "Rafael", "Pedro", "Ángel", "Pablo", "Fernando", "Sergio", "Luis", "Jorge",
        "Alberto", "Álvaro", "Diego", "Adrián", "Raúl", "Enrique", "Ramón", "Vicente",
        "Ignacio", "Andrés", "Rubén", "Óscar", "Joaquín", "Santiago", "Víctor", "Emilio",
        "Julián", "Iñaki", "Íñigo", "Hugo", "Mario",
    ],
    family: &[
        "García", "Rodríguez", "González", "Fernández", "López", "Martínez", "Sánchez", "Pérez",
        "Gómez", "Martín", "Jiménez", "Ruiz", "Hernández", "Díaz", "Moreno", "Muñoz", "Álvarez",
        "Romero", "Alonso", "Gutiérrez", "Navarro", "Torres", "Domínguez", "Vázquez", "Ramos",
        "Gil", "Ramírez", "Serrano", "Blanco", "Molina", "Morales", "Suárez", "Ortega",
        "Delgado", "Castro", "Ortiz", "Rubio", "Marín", "Sanz", "Núñez", "Iglesias", "Medina",
        "Garrido", "Cortés", "Castillo", "Santos", "Lozano", "Guerrero", "Cano", "Prieto",
        "Méndez", "Cruz", "Calvo", "Gallego", "Vidal", "León", "Márquez", "Herrera", "Peña",
        "Flores", "Cabrera", "Campos", "Vega", "Fuentes", "Carrasco", "Díez", "Caballero",
        "Reyes", "Nieto", "Aguilar", "Pascual", "Santana", "Herrero", "Lorenzo", "Montero",
        "Hidalgo", "Giménez", "Ibáñez", "Ferrer", "Durán", "Benítez", "Mora", "Vargas", "Arias",
        "Carmona", "Crespo", "Román", "Pastor", "Soto", "Sáez", "Velasco", "Moya", "Soler",
        "Parra", "Esteban", "Bravo", "Gallardo", "Rojas", "de la Cruz", "de la Fuente",
        "del Río",
    ],
    rare_first: &[
        "Alb", "Bel", "Cal", "Car", "Cas", "Esc", "Gal", "Lar", "Mal", "Mar", "Med", "Mon",
        "Ped", "Ros", "Sal", "Val", "Vel", "Ver", "Quir",
    ],
    rare_second: &[
        "ado", "aña", "ero", "era", "illo", "ino", "uela", "ares", "edo", "ín", "ón", "oso",
        "ueza",
    ],
    courtesy_female: &["Sra.", "Sra", "Dña."],
    courtesy_male: &["Sr.", "Sr", "D."],
    academic: &["Dr.", "Dr"],
};

#[rustfmt::skip]
const DUTCH: Pools = Pools {
    female: &[
        "Anna", "Emma", "Sophie", "Julia", "Lotte", "Sanne", "Femke", "Anouk", "Lisa", "Eva",
        "Fleur", "Maria", "Johanna", "Cornelia", "Wilhelmina", "Geertruida", "Hendrika",
        "Elisabeth", "Ingrid", "Marieke", "Annemieke", "Saskia", "Mieke", "Inge", "Petra",
        "Linda", "Esther", "Marloes", "Joke", "Els", "Ria", "Anneke", "Wendy", "Nienke",
        "Sterre", "Chloë",
    ],
    male: &[
        "Jan", "Johannes", "Cornelis", "Hendrik", "Willem", "Pieter", "Gerardus", "Jacobus",
        "Dirk", "Kees", "Henk", "Piet", "Wim", "Bas", "Sander", "Thijs", "Daan", "Sem", "Lucas",
        "Ruben", "Jeroen", "Maarten", "Bram", "Joost", "Niels", "Stijn", "Koen", "Wouter",
        "Jasper", "Gert", "Rutger", "Floris", "Sjoerd", "Teun", "Arjen",
    ],
    family: &[
        "de Jong", "Jansen", "de Vries", "van den Berg", "van Dijk", "Bakker", "Janssen",
        "Visser", "Smit", "Meijer", "de Boer", "Mulder", "de Groot", "Bos", "Vos", "Peters",
        "Hendriks", "van Leeuwen", "Dekker", "Brouwer", "de Wit", "Dijkstra", "Smits",
        "de Graaf", "van der Meer", "van der Linden", "Kok", "Jacobs", "de Haan", "Vermeulen",
        "van den Heuvel", "van der Veen", "van den Broek", "de Bruijn", "de Bruin",
        "van der Heijden", "Schouten", "van Beek", "Willems", "van Vliet", "van de Ven",
        "Hoekstra", "Maas", "Verhoeven", "Koster", "van Dam", "van der Wal", "Prins", "Blom",
        "Huisman", "Peeters", "de Lange", "Kuipers", "van Wijk", "Post", "Kuiper", "Veenstra",
        "Kramer", "van den Brink", "Scholten", "Martens", "Vink", "de Ruiter", "Timmermans",
        "Groen", "Gerritsen", "Jonker", "van Loon", "Boer", "van der Velde", "Willemsen",
        "Smeets", "de Vos", "Bosch", "van Dongen", "Schipper", "de Koning", "van der Laan",
        "Koning", "Driessen", "van Doorn", "Hermans", "Evers", "van den Bosch",
        "van der Meulen", "Hofman", "Bosman", "Wolters", "IJzerman",
    ],
    rare_first: &[
        "van Aal", "Berk", "van Bloem", "Dorp", "van Hazel", "Hoog", "van Kolk", "Linde",
        "van Molen", "Oost", "Riet", "van Steen", "Water", "van Wilg", "Zand",
    ],
    rare_second: &[
        "broek", "dijk", "hoven", "kamp", "man", "veld", "wijk", "huis", "berg", "stra", "inga",
        "ema",
    ],
    courtesy_female: &["Mevr.", "mevrouw", "Mw."],
    courtesy_male: &["Dhr.", "de heer"],
    academic: &["dr.", "drs.", "ir.", "mr.", "Dr."],
};

/// Nicknames and short forms of given names (formal name, informal forms).
const NICKNAMES: &[(&str, &[&str])] = &[
    // English
    ("William", &["Bill", "Will", "Billy", "Liam"]),
    ("Robert", &["Bob", "Rob", "Bobby", "Bert"]),
    ("Margaret", &["Peggy", "Maggie", "Meg", "Marge"]),
    ("Elizabeth", &["Liz", "Beth", "Betty", "Lizzie", "Eliza"]),
    ("Richard", &["Dick", "Rick", "Rich"]),
    ("James", &["Jim", "Jimmy", "Jamie"]),
    ("Michael", &["Mike", "Mick"]),
    ("Katherine", &["Kate", "Kathy", "Katie"]),
    ("Catherine", &["Cathy", "Cate", "Kate"]),
    ("Jennifer", &["Jen", "Jenny"]),
    ("Thomas", &["Tom", "Tommy"]),
    ("Joseph", &["Joe", "Joey"]),
    ("Charles", &["Charlie", "Chuck"]),
    ("Edward", &["Ed", "Ted", "Eddie", "Ned"]),
    ("Patricia", &["Pat", "Patty", "Trish"]),
    ("Susan", &["Sue", "Susie"]),
    ("Christopher", &["Chris", "Kit"]),
    ("Daniel", &["Dan", "Danny"]),
    ("Anthony", &["Tony"]),
    ("Alexander", &["Alex", "Sandy"]),
    ("Rebecca", &["Becky", "Becca"]),
    ("Deborah", &["Debbie", "Deb"]),
    ("Barbara", &["Barb", "Babs"]),
    ("Jonathan", &["Jon", "Jonny"]),
    ("Matthew", &["Matt"]),
    ("Nicholas", &["Nick", "Nicky"]),
    ("Samuel", &["Sam", "Sammy"]),
    ("Benjamin", &["Ben", "Benny"]),
    ("Timothy", &["Tim", "Timmy"]),
    ("Steven", &["Steve"]),
    ("Stephen", &["Steve"]),
    ("Andrew", &["Andy", "Drew"]),
    ("Victoria", &["Vicky", "Tori"]),
    ("Kimberly", &["Kim"]),
    ("Kenneth", &["Ken", "Kenny"]),
    ("Gregory", &["Greg"]),
    ("Raymond", &["Ray"]),
    ("Jeffrey", &["Jeff"]),
    ("Ronald", &["Ron", "Ronnie"]),
    ("Donald", &["Don", "Donnie"]),
    ("Gerald", &["Jerry"]),
    ("Lawrence", &["Larry"]),
    ("Dorothy", &["Dot", "Dottie"]),
    ("Abigail", &["Abby"]),
    ("Samantha", &["Sam"]),
    ("Pamela", &["Pam"]),
    ("Christine", &["Chris", "Chrissy"]),
    ("Jacqueline", &["Jackie"]),
    ("Judith", &["Judy"]),
    ("Joanne", &["Jo"]),
    ("Frank", &["Frankie"]),
    ("Henry", &["Harry", "Hank"]),
    ("Philip", &["Phil"]),
    ("Peter", &["Pete"]),
    ("Patrick", &["Pat", "Paddy"]),
    ("Mary", &["Molly", "Polly", "Mae"]),
    ("Helen", &["Nell"]),
    ("Sarah", &["Sally", "Sadie"]),
    // Irish
    ("Pádraig", &["Paddy", "Pat"]),
    ("Séamus", &["Shay"]),
    ("Diarmuid", &["Dermot"]),
    ("Siobhán", &["Shiv"]),
    // German
    ("Josef", &["Sepp", "Seppi", "Joe"]),
    ("Johann", &["Hans", "Hannes"]),
    ("Johannes", &["Hannes", "Hans", "Jo"]),
    ("Wolfgang", &["Wolf", "Wolfi"]),
    ("Friedrich", &["Fritz", "Fred"]),
    ("Elisabeth", &["Lisa", "Liesl", "Elli", "Sissi", "Betty"]),
    ("Margarete", &["Grete", "Gretel", "Marga"]),
    ("Katharina", &["Kathi", "Käthe", "Katja"]),
    ("Franziska", &["Franzi"]),
    ("Andreas", &["Andi", "Andy"]),
    ("Stefanie", &["Steffi"]),
    ("Susanne", &["Susi", "Sanne"]),
    ("Christian", &["Chris", "Christl"]),
    ("Matthias", &["Matze", "Hias"]),
    ("Maximilian", &["Max", "Maxi"]),
    ("Sebastian", &["Basti", "Wastl"]),
    ("Tobias", &["Tobi"]),
    ("Dominik", &["Dome", "Nik"]),
    ("Karl-Heinz", &["Kalle"]),
    ("Hans-Peter", &["HP"]),
    ("Gabriele", &["Gabi"]),
    ("Lieselotte", &["Lilo", "Lotte"]),
    ("Heinz", &["Heini"]),
    ("Jürgen", &["Jogi"]),
    ("Rüdiger", &["Rudi"]),
    ("Ursula", &["Uschi", "Ulla"]),
    ("Hildegard", &["Hilde"]),
    ("Annelie", &["Anne"]),
    // French
    ("Frédéric", &["Fred", "Fredo"]),
    ("Christophe", &["Chris"]),
    ("Nicolas", &["Nico"]),
    ("Isabelle", &["Isa", "Babette"]),
    ("Dominique", &["Dom"]),
    ("Guillaume", &["Guigui"]),
    ("Jean-Baptiste", &["JB"]),
    ("Jean-Pierre", &["JP"]),
    ("Stéphanie", &["Steph"]),
    ("Véronique", &["Véro"]),
    ("Valérie", &["Val"]),
    ("Sébastien", &["Seb"]),
    ("Mathilde", &["Mathou"]),
    ("Alexandre", &["Alex"]),
    ("Maxime", &["Max"]),
    ("Aurélie", &["Aurél"]),
    ("Anne-Sophie", &["Anso"]),
    ("Marie-Claire", &["Marie"]),
    // Spanish
    ("José", &["Pepe", "Chema"]),
    ("Francisco", &["Paco", "Pancho", "Curro"]),
    ("Ignacio", &["Nacho"]),
    ("Manuel", &["Manolo", "Manu"]),
    ("Dolores", &["Lola", "Loli"]),
    ("Concepción", &["Concha", "Conchi"]),
    ("Jesús", &["Chus", "Chuy"]),
    ("Guadalupe", &["Lupe"]),
    ("Enrique", &["Quique"]),
    ("Rosario", &["Charo"]),
    ("Alejandro", &["Álex", "Alex"]),
    ("Antonio", &["Toño", "Toni"]),
    ("José Luis", &["Pepelu"]),
    ("José Antonio", &["Josean"]),
    ("María José", &["Majo"]),
    ("Francisco Javier", &["Javi", "Fran"]),
    ("Encarnación", &["Encarna"]),
    ("Montserrat", &["Montse"]),
    ("Javier", &["Javi"]),
    ("Mercedes", &["Merche"]),
    ("Cristina", &["Cris"]),
    ("Teresa", &["Tere"]),
    ("Beatriz", &["Bea"]),
    ("Joaquín", &["Quino"]),
    ("Santiago", &["Santi"]),
    // Dutch
    ("Cornelis", &["Kees", "Cor"]),
    ("Hendrik", &["Henk", "Henny"]),
    ("Jacobus", &["Koos", "Jaap", "Sjaak"]),
    ("Geertruida", &["Truus", "Truida"]),
    ("Pieter", &["Piet"]),
    ("Willem", &["Wim", "Pim"]),
    ("Gerardus", &["Gerard", "Gert", "Sjra"]),
    ("Wilhelmina", &["Mien", "Willy"]),
    ("Cornelia", &["Corrie", "Cor", "Nel"]),
    ("Hendrika", &["Riek", "Henny"]),
    ("Johanna", &["Jo", "Anneke", "Hanneke"]),
    ("Annemieke", &["Mieke"]),
];

fn pools(c: Culture) -> &'static Pools {
    match c {
        Culture::English => &ENGLISH,
        Culture::Irish => &IRISH,
        Culture::German => &GERMAN,
        Culture::French => &FRENCH,
        Culture::Spanish => &SPANISH,
        Culture::Dutch => &DUTCH,
    }
}

/// Index into a list of `len` items, skewed towards the front (common names first):
/// the probability of the first `k` items is about `sqrt(k / len)`.
pub fn skewed_index(rng: &mut Rng, len: usize) -> usize {
    let u = rng.next_f64();
    ((u * u * len as f64) as usize).min(len.saturating_sub(1))
}

/// A given name of `sex` in `culture`.
pub fn given_name(rng: &mut Rng, culture: Culture, sex: Sex) -> &'static str {
    let p = pools(culture);
    let list = match sex {
        Sex::Female => p.female,
        Sex::Male => p.male,
    };
    list[skewed_index(rng, list.len())]
}

/// A family name in `culture`: mostly from the common list, sometimes a rare name
/// composed from two syllables. Spanish names get a second family name most of the time.
pub fn family_name(rng: &mut Rng, culture: Culture) -> String {
    let one = |rng: &mut Rng| -> String {
        let p = pools(culture);
        if rng.chance(0.3) {
            let a = rng.pick(p.rare_first);
            let mut b = rng.pick(p.rare_second);
            // No stutters such as "Woodwood".
            while a.to_lowercase().ends_with(&b.to_lowercase()) {
                b = rng.pick(p.rare_second);
            }
            format!("{a}{b}")
        } else {
            p.family[skewed_index(rng, p.family.len())].to_string()
        }
    };
    let first = one(rng);
    if culture == Culture::Spanish && rng.chance(0.8) {
        let mut second = one(rng);
        while second == first {
            second = one(rng);
        }
        format!("{first} {second}")
    } else {
        first
    }
}

/// An academic title (Dr., Prof. ...) typical for `culture`.
pub fn academic_title(rng: &mut Rng, culture: Culture) -> &'static str {
    rng.pick::<&str>(pools(culture).academic)
}

/// A courtesy title (Mr, Frau, Mme ...) for `sex` in `culture`.
pub fn courtesy_title(rng: &mut Rng, culture: Culture, sex: Sex) -> &'static str {
    let p = pools(culture);
    match sex {
        Sex::Female => rng.pick::<&str>(p.courtesy_female),
        Sex::Male => rng.pick::<&str>(p.courtesy_male),
    }
}

/// The informal forms of a given name (empty when none is known).
pub fn nicknames(given: &str) -> &'static [&'static str] {
    static INDEX: OnceLock<HashMap<&'static str, &'static [&'static str]>> = OnceLock::new();
    INDEX
        .get_or_init(|| NICKNAMES.iter().copied().collect())
        .get(given)
        .copied()
        .unwrap_or(&[])
}

/// Generational suffixes written after a family name (US usage).
pub const SUFFIXES: &[&str] = &["Jr", "Jr.", "Sr.", "II", "III"];

#[cfg(test)]
mod tests {
    use super::*;

    const ALL: [Culture; 6] = [
        Culture::English,
        Culture::Irish,
        Culture::German,
        Culture::French,
        Culture::Spanish,
        Culture::Dutch,
    ];

    #[test]
    fn pools_are_non_empty_and_trimmed() {
        for c in ALL {
            let p = pools(c);
            for list in [p.female, p.male, p.family, p.rare_first, p.rare_second] {
                assert!(!list.is_empty());
                for s in list {
                    assert_eq!(s.trim(), *s, "{s:?}");
                    assert!(!s.contains(',') && !s.contains('\u{1f}'), "{s:?}");
                }
            }
        }
    }

    #[test]
    fn nicknames_differ_from_their_formal_name() {
        for (formal, nicks) in NICKNAMES {
            assert!(!nicks.is_empty());
            for n in *nicks {
                assert_ne!(formal, n);
            }
        }
        assert_eq!(nicknames("Josef"), &["Sepp", "Seppi", "Joe"]);
        assert!(nicknames("Zzyzx").is_empty());
    }

    #[test]
    fn skewed_index_stays_in_range_and_favours_the_front() {
        let mut rng = Rng::new(3);
        let mut front = 0;
        for _ in 0..10_000 {
            let i = skewed_index(&mut rng, 100);
            assert!(i < 100);
            if i < 10 {
                front += 1;
            }
        }
        // P(i < 10) = sqrt(0.1) ~ 0.316 (by construction).
        assert!((2_800..3_500).contains(&front), "{front}");
        assert_eq!(skewed_index(&mut rng, 1), 0);
    }

    #[test]
    fn spanish_family_names_are_mostly_double() {
        let mut rng = Rng::new(9);
        let double = (0..2000)
            .filter(|_| {
                let f = family_name(&mut rng, Culture::Spanish);
                // particles (de la Cruz) contain spaces too; count two capitalised words
                f.split(' ')
                    .filter(|w| w.chars().next().is_some_and(char::is_uppercase))
                    .count()
                    >= 2
            })
            .count();
        assert!((1400..1800).contains(&double), "{double}");
    }
}
