"""Small hand-made tables the demo draws on: nicknames, spellings, street words, domains.

These are the team's own lists (not copied from any product) and are kept apart from the
generator code so a reader can see at a glance which name variants the demo can produce.
"""

from __future__ import annotations

# Formal given name -> informal forms a customer might give at another channel.
NICKNAMES: dict[str, tuple[str, ...]] = {
    "William": ("Bill", "Will", "Billy", "Liam"),
    "Elizabeth": ("Liz", "Beth", "Betty", "Eliza", "Lizzie"),
    "Robert": ("Bob", "Rob", "Bobby", "Robbie"),
    "Richard": ("Rick", "Rich", "Dick", "Ricky"),
    "James": ("Jim", "Jimmy", "Jamie"),
    "John": ("Jack", "Johnny"),
    "Jonathan": ("Jon", "Jonny"),
    "Margaret": ("Maggie", "Peggy", "Meg"),
    "Katherine": ("Kate", "Kathy", "Katie"),
    "Catherine": ("Cathy", "Kate", "Cat"),
    "Kathleen": ("Kathy", "Kath"),
    "Michael": ("Mike", "Mikey", "Mick"),
    "Thomas": ("Tom", "Tommy"),
    "Christopher": ("Chris", "Topher"),
    "Christina": ("Chris", "Tina"),
    "Christine": ("Chris", "Chrissy"),
    "Matthew": ("Matt",),
    "Daniel": ("Dan", "Danny"),
    "Joseph": ("Joe", "Joey"),
    "Josephine": ("Jo", "Josie"),
    "Anthony": ("Tony",),
    "Edward": ("Ed", "Eddie", "Ted"),
    "Patricia": ("Pat", "Patty", "Trish"),
    "Patrick": ("Pat", "Paddy"),
    "Jennifer": ("Jen", "Jenny"),
    "Susan": ("Sue", "Susie"),
    "Deborah": ("Deb", "Debbie"),
    "Alexander": ("Alex", "Xander", "Sandy"),
    "Alexandra": ("Alex", "Lexi", "Sasha"),
    "Benjamin": ("Ben", "Benny"),
    "Samuel": ("Sam", "Sammy"),
    "Samantha": ("Sam", "Sammie"),
    "Steven": ("Steve",),
    "Stephen": ("Steve",),
    "Nicholas": ("Nick", "Nicky"),
    "Timothy": ("Tim", "Timmy"),
    "Charles": ("Charlie", "Chuck"),
    "Francis": ("Frank",),
    "Theodore": ("Ted", "Teddy", "Theo"),
    "Rebecca": ("Becky", "Becca"),
    "Victoria": ("Vicky", "Tori"),
    "Jessica": ("Jess", "Jessie"),
    "Abigail": ("Abby",),
    "Andrew": ("Andy", "Drew"),
    "Kenneth": ("Ken", "Kenny"),
    "Ronald": ("Ron", "Ronnie"),
    "Donald": ("Don", "Donnie"),
    "Gerald": ("Gerry",),
    "Lawrence": ("Larry",),
    "Gregory": ("Greg",),
    "Jeffrey": ("Jeff",),
    "Douglas": ("Doug",),
    "Raymond": ("Ray",),
    "Peter": ("Pete",),
    "Frederick": ("Fred", "Freddie"),
    "Harold": ("Harry", "Hal"),
    "Henry": ("Hank", "Harry"),
    "Dorothy": ("Dot", "Dottie"),
    "Barbara": ("Barb", "Babs"),
    "Cynthia": ("Cindy",),
    "Pamela": ("Pam",),
    "Kimberly": ("Kim",),
    "Kimberley": ("Kim",),
    "Amanda": ("Mandy",),
    "Zachary": ("Zach",),
    "Joshua": ("Josh",),
    "Nathaniel": ("Nate", "Nat"),
    "Nathan": ("Nate",),
    "Jacob": ("Jake",),
    "David": ("Dave", "Davey"),
    "Gabriel": ("Gabe",),
    "Gabriela": ("Gaby",),
    "Isabella": ("Bella", "Izzy"),
    "Olivia": ("Liv",),
    "Susanna": ("Sue",),
    "Francisco": ("Paco", "Pancho"),
    "José": ("Pepe",),
    "Ignacio": ("Nacho",),
    "Guadalupe": ("Lupe",),
    "Enrique": ("Quique",),
    "Dolores": ("Lola",),
    "Jesús": ("Chuy",),
    "Alejandro": ("Alex", "Ale"),
    "Wolfgang": ("Wolf",),
    "Giuseppe": ("Beppe", "Peppe"),
    "Katarzyna": ("Kasia",),
    "Małgorzata": ("Gosia",),
    "Aleksander": ("Olek",),
}

# Spelling groups for names written from other scripts (transliteration hard case).
TRANSLITERATIONS_MALE: tuple[tuple[str, ...], ...] = (
    ("Mohammed", "Muhammad", "Mohamed", "Mohammad"),
    ("Aleksandr", "Alexander", "Aleksander"),
    ("Yusuf", "Yousef", "Youssef"),
    ("Ahmed", "Ahmad"),
    ("Sergei", "Sergey"),
    ("Dmitri", "Dmitry", "Dmitriy"),
    ("Yuri", "Yury", "Iurii"),
    ("Mikhail", "Michail"),
    ("Hussein", "Husain", "Hussain"),
    ("Abdulrahman", "Abdul Rahman", "Abdelrahman"),
)
TRANSLITERATIONS_FEMALE: tuple[tuple[str, ...], ...] = (
    ("Tatiana", "Tatyana"),
    ("Natalia", "Natalya", "Nataliya"),
    ("Fatima", "Fatimah", "Fatma"),
    ("Aisha", "Ayesha", "Aysha"),
    ("Yekaterina", "Ekaterina"),
    ("Zeynab", "Zainab", "Zaynab"),
)
TRANSLITERATED_FAMILY: tuple[tuple[str, ...], ...] = (
    ("Petrov", "Petroff"),
    ("Ivanov", "Ivanoff"),
    ("Kuznetsov", "Kouznetsov"),
    ("Al-Hassan", "Alhassan", "El-Hassan"),
    ("Abdullah", "Abdallah"),
    ("Chaudhry", "Choudhury", "Chowdhury"),
    ("Khalil", "Khaleel"),
)

# Plain names that gain an accent at another channel (accent added).
ACCENT_ADDED: dict[str, str] = {
    "Jose": "José",
    "Maria": "María",
    "Rene": "René",
    "Andre": "André",
    "Zoe": "Zoë",
    "Chloe": "Chloé",
    "Noel": "Noël",
    "Raphael": "Raphaël",
    "Jesus": "Jesús",
    "Ramon": "Ramón",
    "Joaquin": "Joaquín",
    "Agnes": "Agnès",
    "Beatrice": "Béatrice",
    "Helene": "Hélène",
    "Gonzalez": "González",
    "Rodriguez": "Rodríguez",
    "Hernandez": "Hernández",
    "Lopez": "López",
    "Martinez": "Martínez",
    "Perez": "Pérez",
    "Sanchez": "Sánchez",
    "Muller": "Müller",
}

# Common given/family pairs per country, used for "same name, same birth date" strangers.
COMMON_NAMES: dict[str, tuple[tuple[str, str, str], ...]] = {
    "US": (
        ("James", "Smith", "M"),
        ("Michael", "Johnson", "M"),
        ("Maria", "Garcia", "F"),
        ("Robert", "Williams", "M"),
        ("Mary", "Brown", "F"),
        ("David", "Jones", "M"),
        ("Jennifer", "Miller", "F"),
        ("Jose", "Rodriguez", "M"),
    ),
    "GB": (
        ("David", "Jones", "M"),
        ("Sarah", "Williams", "F"),
        ("John", "Smith", "M"),
        ("Emma", "Taylor", "F"),
    ),
    "CA": (
        ("Michael", "Smith", "M"),
        ("Marie", "Tremblay", "F"),
        ("David", "Brown", "M"),
        ("Sarah", "Wilson", "F"),
    ),
}

# Street type words: (full form, short form, weight) per country.
STREET_TYPES: dict[str, tuple[tuple[str, str, float], ...]] = {
    "US": (
        ("Street", "St", 0.25),
        ("Avenue", "Ave", 0.18),
        ("Road", "Rd", 0.12),
        ("Drive", "Dr", 0.12),
        ("Lane", "Ln", 0.08),
        ("Court", "Ct", 0.06),
        ("Place", "Pl", 0.05),
        ("Boulevard", "Blvd", 0.04),
        ("Way", "Way", 0.04),
        ("Circle", "Cir", 0.03),
        ("Terrace", "Ter", 0.02),
        ("Parkway", "Pkwy", 0.01),
    ),
    "GB": (
        ("Road", "Rd", 0.25),
        ("Street", "St", 0.20),
        ("Lane", "Ln", 0.10),
        ("Avenue", "Ave", 0.10),
        ("Close", "Cl", 0.08),
        ("Drive", "Dr", 0.06),
        ("Crescent", "Cres", 0.05),
        ("Way", "Way", 0.05),
        ("Gardens", "Gdns", 0.04),
        ("Place", "Pl", 0.03),
        ("Terrace", "Ter", 0.02),
        ("Grove", "Gr", 0.02),
    ),
    "CA": (
        ("Street", "St", 0.22),
        ("Avenue", "Ave", 0.18),
        ("Road", "Rd", 0.14),
        ("Drive", "Dr", 0.12),
        ("Crescent", "Cres", 0.08),
        ("Boulevard", "Blvd", 0.06),
        ("Court", "Crt", 0.06),
        ("Way", "Way", 0.05),
        ("Place", "Pl", 0.05),
        ("Lane", "Lane", 0.04),
    ),
}
FRENCH_STREET_TYPES = (("rue", 0.6), ("boulevard", 0.15), ("avenue", 0.15), ("chemin", 0.1))

# Words of our own for street names besides family names.
STREET_WORDS = (
    "Oak", "Maple", "Cedar", "Mill", "Church", "Park", "Station", "Lake", "Hill", "River",
    "Spring", "Willow", "Birch", "Elm", "Pine", "Meadow", "Orchard", "Harbour", "Bridge",
    "Chestnut", "Forest", "Garden", "Valley", "Ridge", "Sunset", "Highland", "Brook",
    "Cherry", "Juniper", "Aspen", "Hawthorn", "Linden", "Prospect", "Union", "Market",
)

# Consumer mail providers (domain, weight) per country; the rest are invented domains.
CONSUMER_DOMAINS: dict[str, tuple[tuple[str, float], ...]] = {
    "US": (
        ("gmail.com", 0.34), ("yahoo.com", 0.10), ("outlook.com", 0.08),
        ("hotmail.com", 0.07), ("icloud.com", 0.06), ("aol.com", 0.03),
    ),
    "GB": (
        ("gmail.com", 0.30), ("hotmail.co.uk", 0.10), ("yahoo.co.uk", 0.08),
        ("outlook.com", 0.08), ("btinternet.com", 0.06), ("icloud.com", 0.05),
        ("googlemail.com", 0.02),
    ),
    "CA": (
        ("gmail.com", 0.32), ("hotmail.com", 0.10), ("outlook.com", 0.08),
        ("yahoo.ca", 0.07), ("icloud.com", 0.05),
    ),
}
DOMAIN_SYLLABLES_A = (
    "fen", "lark", "quill", "brant", "marl", "wick", "thorn", "ash", "cobb", "dun", "elm",
    "gorse", "hollin", "kest", "lynd", "moss", "nettle", "pell", "rook", "sedge", "tarn",
    "vell", "wren", "yarrow", "bram", "cray", "dove", "ferri", "glen", "hazel",
)
DOMAIN_SYLLABLES_B = (
    "mere", "wold", "spire", "wick", "moor", "field", "combe", "haven", "ford", "stead",
    "brook", "holt", "ridge", "water", "leigh", "vale", "gate", "well", "burn", "croft",
)
DOMAIN_ENDINGS = ("mail.net", "mail.com", ".net", "net.com", "post.com", "online.net", ".org")
WORK_ENDINGS = ("works.com", "group.com", "health.org", "logistics.com", "partners.com",
                "tech.io", "foods.com", "schools.org", "council.org")

PLACEHOLDER_EMAILS = ("none@none.com", "noemail@noemail.com", "na@na.com", "no.email@none.com")
PLACEHOLDER_SSNS = ("000000000", "123456789", "999999999", "111111111")

# Neighbouring keys on a QWERTY keyboard, for realistic one-letter slips.
KEY_NEIGHBOURS = {
    "a": "qwsz", "b": "vghn", "c": "xdfv", "d": "serfcx", "e": "wsdr", "f": "drtgvc",
    "g": "ftyhbv", "h": "gyujnb", "i": "ujko", "j": "huikmn", "k": "jiolm", "l": "kop",
    "m": "njk", "n": "bhjm", "o": "iklp", "p": "ol", "q": "wa", "r": "edft", "s": "awedxz",
    "t": "rfgy", "u": "yhji", "v": "cfgb", "w": "qase", "x": "zsdc", "y": "tghu", "z": "asx",
}

EMAIL_TAGS = ("bank", "cu", "news", "shop", "money", "2021", "card", "spam", "signup")
