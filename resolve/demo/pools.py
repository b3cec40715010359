"""Value pools the demo draws people from, built once per process with Faker and a fixed seed.

Calling Faker per record would make a million-record demo take many minutes, so the demo
builds pools of given names, family names, streets, cities and postcodes once (a few thousand
values, seconds at most), checks phone number blocks against the phone library's metadata
once, and then draws every person with a numpy generator (see `people`). The pools use a fixed
seed of their own: the scenario seed only changes which pool values are drawn.
"""

from __future__ import annotations

import unicodedata
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
import phonenumbers
from faker import Faker
from phonenumbers import PhoneNumberType

from resolve.demo import tables

POOL_SEED = 20250630

ORIGINS = (
    "en_US", "en_GB", "fr_CA", "es_MX", "es_ES", "de_DE", "fr_FR", "it_IT", "pl_PL",
    "vi_VN", "en_IN", "pt_BR",
)
SPANISH_ORIGINS = ("es_MX", "es_ES")
# Where a customer's name comes from, per country of residence (our own rough mix).
ORIGIN_MIX: dict[str, dict[str, float]] = {
    "US": {"en_US": 0.66, "es_MX": 0.12, "es_ES": 0.02, "vi_VN": 0.03, "en_IN": 0.04,
           "de_DE": 0.03, "it_IT": 0.03, "pl_PL": 0.02, "fr_FR": 0.02, "pt_BR": 0.03},
    "GB": {"en_GB": 0.76, "en_IN": 0.08, "pl_PL": 0.05, "it_IT": 0.03, "fr_FR": 0.03,
           "es_ES": 0.02, "de_DE": 0.03},
    "CA": {"en_US": 0.55, "fr_CA": 0.25, "en_IN": 0.06, "vi_VN": 0.03, "it_IT": 0.03,
           "pl_PL": 0.03, "es_MX": 0.03, "pt_BR": 0.02},
}
CITY_LOCALES = {"US": ("en_US",), "GB": ("en_GB",), "CA": ("en_CA", "fr_CA")}
POOL_SIZES = {"US": (4000, 1500), "GB": (2000, 600), "CA": (1500, 500)}  # streets, cities

_FOLD = str.maketrans({"ł": "l", "Ł": "L", "đ": "d", "Đ": "D", "ß": "ss", "ø": "o",
                       "Ø": "O", "æ": "ae", "Æ": "AE", "œ": "oe", "Œ": "OE", "ı": "i"})


def fold_ascii(text: str) -> str:
    """Drop accents and map a few special letters to plain ASCII (ł -> l, ß -> ss)."""
    decomposed = unicodedata.normalize("NFKD", text.translate(_FOLD))
    return "".join(ch for ch in decomposed if not unicodedata.combining(ch))


def email_word(text: str) -> str:
    """Lower-case ASCII letters and digits of a name, as people put them in a mailbox name."""
    return "".join(ch for ch in fold_ascii(text).lower() if ch.isascii() and ch.isalnum())


@dataclass(frozen=True)
class NamePool:
    """Distinct names with cumulative draw probabilities (frequent names drawn more often)."""

    names: np.ndarray  # object array of str
    cum: np.ndarray  # cumulative probabilities, last = 1

    def draw(self, rng: np.random.Generator, n: int) -> np.ndarray:
        """Draw ``n`` names by frequency."""
        idx = np.searchsorted(self.cum, rng.random(n), side="right")
        return self.names[np.minimum(idx, len(self.names) - 1)]


@dataclass(frozen=True)
class Pools:
    """Everything the demo draws from; built once by `build_pools`."""

    given: dict[tuple[str, str], NamePool]  # (origin, "M"/"F") -> pool
    family: dict[str, NamePool]  # origin -> pool
    street_full: dict[str, np.ndarray]  # country -> street names ("Ellison Road")
    street_short: dict[str, np.ndarray]  # same streets, type word abbreviated ("Ellison Rd")
    city: dict[str, np.ndarray]  # country -> city names
    city_postcodes: dict[str, np.ndarray]  # country -> (n_city, 3) postcodes
    area_codes: dict[str, np.ndarray]  # "US"/"CA" -> area codes valid for the region
    gb_mobile_blocks: np.ndarray  # 4-digit starts of UK mobile national numbers (7xxx)
    gb_landline_blocks: np.ndarray  # 4-digit starts of UK geographic national numbers
    consumer_domains: dict[str, tuple[np.ndarray, np.ndarray]]  # country -> (domains, cum)
    invented_domains: np.ndarray
    work_domains: np.ndarray
    call_centre_numbers: tuple[str, ...]  # E.164 toll-free numbers of the two businesses
    nino_prefixes: np.ndarray


def _cum(weights: np.ndarray) -> np.ndarray:
    cum = np.cumsum(np.asarray(weights, dtype=float))
    return cum / cum[-1]


def _clean_names(names, weights) -> tuple[np.ndarray, np.ndarray]:
    keep: dict[str, float] = {}
    for name, weight in zip(names, weights):
        name = " ".join(str(name).split())
        if name and all(ch.isalpha() or ch in " -'" for ch in name):
            keep[name] = keep.get(name, 0.0) + float(weight)
    ordered = sorted(keep)
    return np.array(ordered, dtype=object), np.array([keep[k] for k in ordered])


def _name_table(fake: Faker, attr: str, method: str) -> NamePool:
    """Names from a Faker person table (with its weights when it has them), else by sampling."""
    provider = fake.provider("faker.providers.person")
    table = getattr(provider, attr, None)
    if isinstance(table, dict) and len(table) >= 30:
        names, weights = list(table.keys()), list(table.values())
    elif isinstance(table, (tuple, list)) and len(set(table)) >= 30:
        names, weights = list(table), [1.0] * len(table)
    else:
        draw = getattr(fake, method)
        names = [draw() for _ in range(800)]
        weights = [1.0] * len(names)
    names_arr, w = _clean_names(names, weights)
    return NamePool(names_arr, _cum(w))


def _name_pools() -> tuple[dict, dict]:
    given: dict[tuple[str, str], NamePool] = {}
    family: dict[str, NamePool] = {}
    for i, origin in enumerate(ORIGINS):
        fake = Faker(origin)
        fake.seed_instance(POOL_SEED + i)
        given[(origin, "M")] = _name_table(fake, "first_names_male", "first_name_male")
        given[(origin, "F")] = _name_table(fake, "first_names_female", "first_name_female")
        family[origin] = _name_table(fake, "last_names", "last_name")
    return given, family


def _streets(rng: np.random.Generator, country: str, family: dict[str, NamePool]):
    size = POOL_SIZES[country][0]
    main = {"US": "en_US", "GB": "en_GB", "CA": "en_US"}[country]
    bases = np.concatenate([family[main].names, np.array(tables.STREET_WORDS, dtype=object)])
    if country == "US":
        ordinals = [f"{k}{'th' if 10 <= k % 100 <= 20 else {1: 'st', 2: 'nd', 3: 'rd'}.get(k % 10, 'th')}"
                    for k in range(1, 41)]
        bases = np.concatenate([bases, np.array(ordinals, dtype=object)])
    types = tables.STREET_TYPES[country]
    cum = _cum(np.array([t[2] for t in types]))
    full: list[str] = []
    short: list[str] = []
    seen: set[str] = set()
    n_french = size // 5 if country == "CA" else 0
    while len(full) < size - n_french:
        base = bases[rng.integers(len(bases))]
        t = types[int(np.searchsorted(cum, rng.random(), side="right"))]
        name = f"{base} {t[0]}"
        if name not in seen:
            seen.add(name)
            full.append(name)
            short.append(f"{base} {t[1]}")
    if n_french:
        fr = family["fr_CA"].names
        fr_cum = _cum(np.array([w for _, w in tables.FRENCH_STREET_TYPES]))
        while len(full) < size:
            t = tables.FRENCH_STREET_TYPES[int(np.searchsorted(fr_cum, rng.random(), side="right"))][0]
            name = f"{t} {fr[rng.integers(len(fr))]}"
            if name not in seen:
                seen.add(name)
                full.append(name)
                short.append(name.replace("boulevard ", "boul. "))
    return np.array(full, dtype=object), np.array(short, dtype=object)


def _ca_postcode(code: str) -> str:
    code = code.replace(" ", "").upper()
    return f"{code[:3]} {code[3:]}"


def _cities(country: str) -> tuple[np.ndarray, np.ndarray]:
    size = POOL_SIZES[country][1]
    names: list[str] = []
    codes: list[list[str]] = []
    seen: set[str] = set()
    locales = CITY_LOCALES[country]
    for j, locale in enumerate(locales):
        fake = Faker(locale)
        fake.seed_instance(POOL_SEED + 100 + j)
        target = size if j == len(locales) - 1 else int(size * 0.75)
        tries = 0
        while len(names) < target and tries < target * 20:
            tries += 1
            city = " ".join(fake.city().split())
            if not city or city in seen:
                continue
            seen.add(city)
            names.append(city)
            if country == "US":
                codes.append([fake.zipcode() for _ in range(3)])
            elif country == "CA":
                first = _ca_postcode(fake.postcode())
                codes.append([first] + [first[:4] + _ca_postcode(fake.postcode())[4:] for _ in range(2)])
            else:
                first = fake.postcode()
                outward = first.split(" ")[0]
                codes.append([first] + [outward + " " + fake.postcode().split(" ")[-1] for _ in range(2)])
    return np.array(names, dtype=object), np.array(codes, dtype=object)


def _valid(e164: str, region: str, kind) -> bool:
    number = phonenumbers.parse(e164)
    return phonenumbers.is_valid_number_for_region(number, region) and (
        phonenumbers.number_type(number) in kind
    )


def _area_codes(rng: np.random.Generator, region: str) -> np.ndarray:
    """Area codes whose ordinary numbers the phone library calls valid for ``region``."""
    kinds = (PhoneNumberType.FIXED_LINE_OR_MOBILE, PhoneNumberType.FIXED_LINE, PhoneNumberType.MOBILE)
    keep = []
    for area in range(200, 1000):
        if area % 100 == 11 or not _valid(f"+1{area}2014821", region, kinds):
            continue
        exchanges = rng.integers(200, 1000, 24)
        exchanges = np.where(exchanges % 100 == 11, exchanges + 1, exchanges)
        exchanges = np.where(exchanges == 555, 556, exchanges)
        if all(_valid(f"+1{area}{ex}{rng.integers(0, 10000):04d}", region, kinds) for ex in exchanges):
            keep.append(area)
    return np.array(keep, dtype=np.int64)


def _gb_blocks(rng: np.random.Generator, starts: range, kind) -> np.ndarray:
    """4-digit starts of UK national numbers whose 10-digit numbers are all valid of ``kind``."""
    keep = []
    for start in starts:
        tails = [f"{t:06d}" for t in (0, 999999, *rng.integers(0, 1_000_000, 3))]
        if all(_valid(f"+44{start}{t}", "GB", (kind,)) for t in tails):
            keep.append(start)
    return np.array(keep, dtype=np.int64)


def _call_centres(rng: np.random.Generator) -> tuple[str, ...]:
    out = []
    for toll_free in (800, 888):
        while True:
            number = f"+1{toll_free}{rng.integers(200, 1000)}{rng.integers(0, 10000):04d}"
            if _valid(number, "US", (PhoneNumberType.TOLL_FREE,)):
                out.append(number)
                break
    return tuple(out)


def _nino_prefixes() -> np.ndarray:
    # HMRC manual NIM39110 (as summarised in the team's CHECKS.md): D F I Q U V never used as
    # either letter, O never second, and BG GB KN NK NT TN ZZ not used as prefixes.
    letters = [c for c in "ABCDEFGHIJKLMNOPQRSTUVWXYZ" if c not in "DFIQUV"]
    bad = {"BG", "GB", "KN", "NK", "NT", "TN", "ZZ"}
    return np.array(
        [a + b for a in letters for b in letters if b != "O" and a + b not in bad], dtype=object
    )


def _invented_domains(rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    a, b = tables.DOMAIN_SYLLABLES_A, tables.DOMAIN_SYLLABLES_B
    mail, work = set(), set()
    while len(mail) < 160:
        mail.add(a[rng.integers(len(a))] + b[rng.integers(len(b))]
                 + tables.DOMAIN_ENDINGS[rng.integers(len(tables.DOMAIN_ENDINGS))])
    while len(work) < 120:
        work.add(a[rng.integers(len(a))] + b[rng.integers(len(b))]
                 + tables.WORK_ENDINGS[rng.integers(len(tables.WORK_ENDINGS))])
    return np.array(sorted(mail), dtype=object), np.array(sorted(work - mail), dtype=object)


@lru_cache(maxsize=1)
def build_pools() -> Pools:
    """Build (once per process) every pool the demo draws from; deterministic."""
    rng = np.random.default_rng(POOL_SEED)
    given, family = _name_pools()
    street_full, street_short, city, city_postcodes = {}, {}, {}, {}
    for country in ("US", "GB", "CA"):
        street_full[country], street_short[country] = _streets(rng, country, family)
        city[country], city_postcodes[country] = _cities(country)
    consumer = {
        c: (np.array([d for d, _ in doms], dtype=object), _cum(np.array([w for _, w in doms])))
        for c, doms in tables.CONSUMER_DOMAINS.items()
    }
    invented, work = _invented_domains(rng)
    return Pools(
        given=given,
        family=family,
        street_full=street_full,
        street_short=street_short,
        city=city,
        city_postcodes=city_postcodes,
        area_codes={"US": _area_codes(rng, "US"), "CA": _area_codes(rng, "CA")},
        gb_mobile_blocks=_gb_blocks(rng, range(7100, 8000), PhoneNumberType.MOBILE),
        gb_landline_blocks=_gb_blocks(rng, range(1130, 2100), PhoneNumberType.FIXED_LINE),
        consumer_domains=consumer,
        invented_domains=invented,
        work_domains=work,
        call_centre_numbers=_call_centres(rng),
        nino_prefixes=_nino_prefixes(),
    )
