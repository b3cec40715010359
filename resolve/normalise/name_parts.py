"""Word lists for personal names, and the best-guess split of a full name into its parts.

Some extracts hold one ``name`` column instead of given and family names. Splitting such a
value is a guess: "Maria de la Cruz", "Juan Garcia Lopez", "LI Wei" and "Smith, John" each
follow a different convention. This module holds the rules (see
docs/normalisation.md, "Full names") and the word lists they use: titles, suffixes, family
name particles and placeholder words. The split runs once per distinct full-name value, in
Python, because the rules look at whole tokens in order; everything else in the name
normaliser is columnar.
"""

from __future__ import annotations

import re

# Titles removed from the start of a given name or full name (common practice).
TITLES = (
    "mr", "mrs", "ms", "miss", "mx", "master", "dr", "doctor", "prof", "professor", "sir",
    "dame", "lord", "lady", "rev", "revd", "reverend", "fr", "sr", "sra", "srta", "mme",
    "mlle", "herr", "frau", "dott", "hon",
)
# Generational suffixes are kept (a father and son can share every other part of a name);
# the left side is how they are written, the right side the form we keep.
GENERATIONAL = {
    "jr": "jr", "jnr": "jr", "junior": "jr", "sr": "sr", "snr": "sr", "senior": "sr",
    "ii": "ii", "2nd": "ii", "iii": "iii", "3rd": "iii", "iv": "iv", "4th": "iv",
}
# Degrees and honours: removed, not kept (common practice).
POST_NOMINALS = (
    "phd", r"ph\.\s?d", "md", r"m\.\s?d", "esq", "esquire", "dds", "cpa", "mba", "jd", "llb",
    "qc", "kc", "obe", "mbe", "cbe", "rn",
)
# Particles that start a family name (van der Berg, de la Cruz, al-Hassan, bin Ismail).
PARTICLES = (
    "van", "von", "der", "den", "de", "del", "della", "dello", "delle", "dei", "degli", "di",
    "da", "das", "dos", "do", "du", "des", "la", "le", "les", "lo", "dal", "dalla", "ten",
    "ter", "te", "zu", "zum", "zur", "af", "al", "el", "bin", "binti", "bint", "ibn", "ap",
    "st", "saint",
)
# Particles removed from the front of a family key to give its core ("van der berg" ->
# "berg"). "St"/"Saint" start a split but stay in the core: St John and John differ.
CORE_PARTICLES = tuple(p for p in PARTICLES if p not in ("st", "saint"))
# Whole-part keys that mean "no real name here" (common practice in customer data; FNU/LNU
# "first/last name unknown" and NMN "no middle name" are US conventions).
PLACEHOLDER_WORDS = frozenset(
    """test testing tester unknown unk unkn unkown notknown nk none null nil noname name
    names customer client cust user fnu lnu nfn nln nmn nmi xx tbc tbd tba dummy sample
    anonymous anon asdf asdfg qwerty abc abcd abcde firstname lastname surname givenname
    forename middlename blank empty missing void dnu""".split()
)
PLACEHOLDER_PHRASES = frozenset(
    """not known|not given|not provided|not applicable|no name|first name|last name|
    given name|family name|middle name|do not use|see above|same as above|name unknown|
    test test|test user|test customer|test client|first last""".replace("\n", "").split("|")
)
# Given + family key pairs used for unidentified or made-up persons (common practice).
PLACEHOLDER_PAIRS = frozenset(
    {
        "john doe", "jane doe", "baby doe", "john roe", "jane roe", "richard roe",
        "mickey mouse", "donald duck", "joe bloggs", "fred bloggs",
    }
)
# Middle-name keys that mean "no middle name".
NO_MIDDLE = frozenset({"nmn", "nmi", "nm", "none", "na"})

_TITLE_ALT = "|".join(TITLES)
# RE2 patterns (Arrow compute) and their Python twins use the same text.
TITLE_PATTERN = r"(?i)^(?:(?:" + _TITLE_ALT + r")(?:\.\s*|\s+|$))+"
_SUFFIX_ALT = "|".join(sorted(GENERATIONAL, key=len, reverse=True) + list(POST_NOMINALS))
SUFFIX_PATTERN = r"(?i)^(?P<stem>.*?)(?P<run>(?:[\s,]+(?:" + _SUFFIX_ALT + r")\.?)+)$"
GENERATION_PATTERN = (
    r"(?i)(?:^|[\s,.])(?P<gen>"
    + "|".join(sorted(GENERATIONAL, key=len, reverse=True))
    + r")(?:[\s,.]|$)"
)

# The same words in key form (lower case, no dots), for keys whose raw form hid them
# ("M.R." -> "mr"): keys never start with a title or end with a suffix.
KEY_TITLE_PATTERN = r"^(?:(?:" + _TITLE_ALT + r")(?: |$))+"
KEY_SUFFIX_PATTERN = (
    r"(?: (?:" + "|".join(sorted(GENERATIONAL, key=len, reverse=True))
    + r"|phd|md|esq|esquire|dds|cpa|mba|jd|llb|qc|kc|obe|mbe|cbe|rn))+$"
)

_TITLE_RE = re.compile(TITLE_PATTERN[4:], re.IGNORECASE)
_SUFFIX_RE = re.compile(SUFFIX_PATTERN[4:], re.IGNORECASE | re.DOTALL)
_GENERATION_RE = re.compile(GENERATION_PATTERN[4:], re.IGNORECASE)
_VOWEL_RE = re.compile(r"[aeiouyáéíóúàèìòùäëïöüâêîôûåæøœ]", re.IGNORECASE)
_INITIAL_RE = re.compile(r"^\w\.?$")
_PARTICLE_SET = frozenset(PARTICLES)


def generation_of(suffix_text: str | None) -> str | None:
    """Return the kept generational suffix (jr, sr, ii, iii, iv) found in ``suffix_text``."""
    if not suffix_text:
        return None
    m = _GENERATION_RE.search(suffix_text)
    return GENERATIONAL[m.group(1).lower()] if m else None


def _is_upper_word(token: str) -> bool:
    letters = [c for c in token if c.isalpha()]
    return len(letters) >= 2 and token.isupper()


def _caps_family_first(tokens: list[str]) -> int:
    """Count leading ALL-CAPS tokens written as a family name ("DUPONT Jean"), else 0.

    A leading run counts only when a later token is not all upper case and every token in
    the run holds a vowel (or is "NG"), so that run-together initials like "JJ" are not
    taken for a family name.
    """
    n = 0
    while n < len(tokens) and _is_upper_word(tokens[n]):
        if not (_VOWEL_RE.search(tokens[n]) or tokens[n] == "NG"):
            return 0
        n += 1
    if 0 < n < len(tokens) and not any(_is_upper_word(t) for t in tokens[n:]):
        return n
    return 0


def split_full_name(text: str | None) -> tuple[str | None, str | None, str | None]:
    """Split one full name into (given part, family part, generational suffix).

    The given part keeps any middle names ("John Paul"); the caller splits it further.
    Rules, in order: titles off the front; suffixes off the end; "Family, Given" when a
    comma is present; leading ALL-CAPS tokens are the family name ("DUPONT Jean");
    "Smith J" (a trailing initial) is family first; a particle after the first token starts
    the family name ("Maria de la Cruz"); "Garcia y Lopez" keeps both surnames; otherwise the
    last token is the family name. A single token is taken as a family name.
    """
    if text is None:
        return None, None, None
    s = " ".join(str(text).split())
    s = _TITLE_RE.sub("", s).strip()
    suffix = None
    m = _SUFFIX_RE.match(s)
    if m and m.group(1).strip(" ,"):
        suffix = generation_of(m.group(2))
        s = m.group(1).strip()
    if not s:
        return None, None, suffix
    if "," in s:
        family, _, given = s.partition(",")
        given = " ".join(given.replace(",", " ").split()) or None
        family = family.strip() or None
        return given, family, suffix
    tokens = s.split(" ")
    if len(tokens) == 1:
        return None, tokens[0], suffix
    caps = _caps_family_first(tokens)
    if caps:
        return " ".join(tokens[caps:]), " ".join(tokens[:caps]).title(), suffix
    if _INITIAL_RE.match(tokens[-1]) and not _INITIAL_RE.match(tokens[0]):
        return " ".join(tokens[1:]), tokens[0], suffix
    for i in range(1, len(tokens) - 1):
        word = tokens[i].lower().rstrip(".")
        if word == "y" and i >= 2:
            return " ".join(tokens[: i - 1]), " ".join(tokens[i - 1 :]), suffix
        if word in _PARTICLE_SET:
            return " ".join(tokens[:i]), " ".join(tokens[i:]), suffix
    return " ".join(tokens[:-1]), tokens[-1], suffix
