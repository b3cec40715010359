"""Parse a street line into house number, unit and street name, and abbreviate its terms.

Street lines arrive in many shapes: "12 Main Street Apt 4B", "Apt 4B, 12 Main St",
"12 MAIN ST #4B", "Flat 3, 12 High Street", "101-123 Main St" (Canada: unit 101 at number
123), "5/12 Smith St" (Australia), "PO Box 123", "RR 2 Box 15". The rules below take them
apart with RE2 regular expressions over whole Arrow arrays of distinct street lines, and
write street types, directions and unit designators in one short form from
resolve/data/address_terms.csv (USPS Publication 28 Appendix C1 and C2, from memory, plus UK
and Canadian terms). Rules and their limits: docs/normalisation.md ("Addresses").
"""

from __future__ import annotations

import functools
from importlib import resources

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from resolve.normalise.textkeys import (
    STRING,
    blank_to_null,
    extract_where,
    fold,
    repeated_character,
    replace_where,
    strings,
    tidy,
)

# Street-line states (the address normaliser turns them into reason codes).
OK, ABSENT, PLACEHOLDER_LINE, NO_FIXED, NO_STREET_NAME, NO_NUMBER = 0, 1, 2, 3, 4, 5

# Unit designators whose number alone identifies the dwelling: "Apt 4B", "Unit 4B",
# "Flat 4B", "Suite 4B" and "#4B" all give unit "4b" so that they match one another.
GENERIC_UNITS = frozenset({"apt", "unit", "ste", "flat", ""})

PLACEHOLDER_LINES = frozenset(
    """unknown|unk|n a|na|none|null|nil|not known|not provided|not given|no address|
    address|street|tbc|tbd|tba|test|test address|test street|test st|xxx|same|same as above|
    see above|as above|do not use|dnu|returned mail|return to sender|rts|undeliverable|
    gone away|moved|blank|empty|missing|0|00|000|no street|none given|address unknown|
    various|abroad|overseas""".replace("\n", "").replace("    ", "").split("|")
)
NO_FIXED_LINES = frozenset(
    """no fixed abode|nfa|no fixed address|of no fixed abode|homeless|general delivery|
    no permanent address|no fixed residence|nfd|transient""".replace("\n", "").replace(
        "    ", ""
    ).split("|")
)
# Countries whose street lines put the house number first (others may put it last).
NUMBER_FIRST = ("US", "CA", "GB", "IE", "AU", "NZ", "IM", "JE", "GG")

_ID = r"[a-z]?\d+[a-z]?(?:-\d+[a-z]?)?|[a-z]"
_SEP = r"(?:\s*,\s*|\s+)"
_PO_BOX = (
    r"(?:^|[\s,])(?:p\s?o\s?box|p\s?o\s?b|pob|post\s?office\s?box|pobox|post\s?box|box|"
    r"case\s?postale|cp|bp)\s*#?\s*(?P<num>[a-z]?\d+[a-z]?)(?:\s|,|$)"
)
_RURAL = (
    r"^(?P<kind>rural\s?route|rr|r\s?r|hc|highway\s?contract|star\s?route)\s*(?P<route>\d+)"
    r"[\s,]*(?:box|bx)\s*#?\s*(?P<num>[a-z]?\d+[a-z]?)"
)
_NUMBER = r"^(?P<num>\d+[a-z]?(?:-\d+[a-z]?)?(?: 1/2)?)(?:\s+|$)"
_NUMBER_LAST = r"^(?P<rest>\D.*?)\s+(?P<num>\d+[a-z]?(?:-\d+[a-z]?)?)$"
_SEGMENT = r"(?:^|,\s*)(?P<line>\d[^,]*)"
_HOUSE_NAME = r"^(?P<name>[^,\d][^,]*),\s*(?P<line>[^,]+)"
_CA_UNIT = r"^(?P<unit>[a-z]?\d+[a-z]?)-(?P<num>\d+[a-z]?)\s+(?P<rest>.+)$"
_AU_UNIT = r"^(?P<unit>[a-z]?\d+[a-z]?)/(?P<num>\d+[a-z]?)\s+(?P<rest>.+)$"
_FLOOR_LEAD = r"^(?P<id>\d+)(?:st|nd|rd|th)\s+(?:floor|fl)" + _SEP + r"(?P<rest>.+)$"
_FLOOR_TRAIL = r"^(?P<rest>.+?)" + _SEP + r"(?P<id>\d+)(?:st|nd|rd|th)\s+(?:floor|fl)$"


@functools.lru_cache(maxsize=1)
def address_terms() -> pd.DataFrame:
    """The address term table (resolve/data/address_terms.csv): term, standard, kind, source."""
    path = resources.files("resolve") / "data" / "address_terms.csv"
    with path.open("r", encoding="utf-8") as handle:
        return pd.read_csv(handle, dtype="string", keep_default_na=False)


@functools.lru_cache(maxsize=1)
def street_terms() -> tuple[pa.Array, pa.Array]:
    """(term, standard) for words in a street name: street types, directions, ordinals."""
    t = address_terms()
    t = t[~t["kind"].str.startswith("unit")].drop_duplicates("term")
    return strings(t["term"].tolist()), strings(t["standard"].tolist())


@functools.lru_cache(maxsize=1)
def _unit_terms() -> tuple[pa.Array, pa.Array, str, str]:
    """(term, standard, numbered-designator regex, no-number-designator regex)."""
    t = address_terms()
    t = t[t["kind"].str.startswith("unit")].drop_duplicates("term")
    numbered = t[t["kind"] == "unit"]["term"].tolist()
    no_number = t[t["kind"] == "unit_no_number"]["term"].tolist()
    by_length = lambda words: "|".join(sorted(words, key=len, reverse=True))  # noqa: E731
    return (
        strings(t["term"].tolist()),
        strings(t["standard"].tolist()),
        by_length(numbered),
        by_length(no_number),
    )


def map_words(text: pa.Array, terms: pa.Array, standards: pa.Array) -> pa.Array:
    """Replace each space-separated word found in ``terms`` by its standard form."""
    filled = pc.fill_null(text, "")
    lists = pc.split_pattern(filled, pattern=" ")
    flat = pc.list_flatten(lists)
    mapped = pc.coalesce(pc.take(standards, pc.index_in(flat, value_set=terms)), flat)
    rebuilt = type(lists).from_arrays(lists.offsets, mapped)
    joined = pc.binary_join(rebuilt, pa.scalar(" ", mapped.type))
    return pc.if_else(pc.is_null(text), pa.scalar(None, STRING), blank_to_null(joined))


def _cut_tail(s: pa.Array, tail: str) -> tuple[pa.Array, dict[str, pa.Array]]:
    """Split off a trailing part that follows a space or comma: (rest, named groups).

    The tail pattern is searched unanchored at the start (``[\\s,]+`` then the tail, up to
    the end), which RE2 answers much faster than capturing the whole rest of the line; a
    line that is nothing but the tail is left alone.
    """
    pattern = r"[\s,]+" + tail
    found = extract_where(s, r"[^\s,]" + pattern, gate=r"[^\s,]" + pattern)
    rest = replace_where(s, r"[^\s,]" + pattern, pattern, "")
    return rest, found


def _prepare(values: pa.Array) -> pa.Array:
    """Fold, lower-case and tidy the punctuation of street lines.

    Each regular-expression pass costs about the same per value however simple the
    pattern, so one pass finds the lines that hold anything besides letters, digits and
    single spaces, and only those are cleaned.
    """
    s = pc.utf8_lower(fold(values))
    odd = pc.fill_null(pc.match_substring_regex(s, pattern=r"[^a-z0-9 ]|  |^ | $|^$"), False)
    if not pc.any(odd).as_py():
        return s
    t = pc.filter(s, odd)
    for pattern, replacement in (
        (r"[.'’‘`´ʼ]", ""),
        (r"[;|]", ","),
        (r"[^\p{L}\p{M}\p{N}\s,#/\-]", " "),
        (r"(\d)\s*([-/])\s*(\d)", r"\1\2\3"),
        (r"\s*#\s*", " # "),
        (r"\s*,[\s,]*", ", "),
        (r"\s+", " "),
        (r"^[\s,]+|[\s,]+$", ""),
    ):
        t = pc.replace_substring_regex(t, pattern=pattern, replacement=replacement)
    return blank_to_null(pc.replace_with_mask(s, odd, t.cast(s.type)))


def _unit_label(
    designator: pa.Array, ident: pa.Array, terms: pa.Array, standards: pa.Array
) -> tuple[pa.Array, pa.Array]:
    """(unit, as shown): "4b" and "#4b" for a generic designator (apt, unit, flat, suite, #);
    "bldg 2" or "rear" for the others, shown the same. Null where there is no unit."""
    n = len(ident)
    some = pc.or_(pc.is_valid(designator), pc.is_valid(ident))
    if not pc.any(some).as_py():
        return pa.nulls(n, STRING), pa.nulls(n, STRING)
    des, ident = pc.filter(designator, some), pc.filter(ident, some)
    std = pc.take(standards, pc.index_in(des, value_set=terms))
    generic = pc.or_(pc.is_null(std), pc.is_in(std, value_set=strings(sorted(GENERIC_UNITS))))
    with_des = pc.binary_join_element_wise(std, ident, pa.scalar(" ", STRING))
    labelled = pc.coalesce(with_des, std, ident)
    label = pc.if_else(generic, ident, labelled)
    hashed = pc.binary_join_element_wise(pa.scalar("#", STRING), ident, pa.scalar("", STRING))
    shown = pc.if_else(generic, hashed, labelled)
    empty = pa.nulls(n, STRING)
    return pc.replace_with_mask(empty, some, label), pc.replace_with_mask(empty, some, shown)


_SIMPLE = (
    r"^(?P<num>\d+[a-z]?) (?P<rest>(?:[a-z]+ )*(?P<last>[a-z]+))"
    r"(?:,? (?:(?P<des>[a-z]+) ?#? ?|# ?)(?P<id>[a-z]?\d+[a-z]?(?:-\d+[a-z]?)?))?$"
)
_FIELDS = ("house_number", "unit", "street_name", "key", "line")


def parse_streets(values: pa.Array, countries: pa.Array) -> dict:
    """Parse distinct street lines (with their country codes) into their parts.

    Returns Arrow arrays ``house_number``, ``unit``, ``street_name``, ``key``
    ("house|street|unit") and ``line`` (readable form), and numpy arrays ``present``,
    ``po_box`` and ``state`` (OK, ABSENT, PLACEHOLDER_LINE, NO_FIXED, NO_STREET_NAME,
    NO_NUMBER).

    Most lines are plain "12 Main St" or "12 Main St Apt 4": a number, words ending in a
    street type or direction, perhaps a unit with a number. Those take a short path; the rest
    go through every rule.
    """
    s = _prepare(values)
    simple = extract_where(s, _SIMPLE, most=True)
    terms, _, numbered, _ = _unit_terms()
    known_unit = pc.or_kleene(pc.is_null(simple["des"]),
                              pc.is_in(simple["des"], value_set=strings(numbered.split("|"))))
    is_simple = pc.and_(pc.is_in(simple["last"], value_set=street_type_words()), known_unit)
    is_simple = pc.fill_null(is_simple, False)
    is_simple = pc.and_(is_simple, pc.invert(pc.match_substring(simple["rest"], "fake")))
    is_simple = pc.fill_null(is_simple, False)
    easy = is_simple.to_numpy(zero_copy_only=False)
    if easy.all():
        return _parse_simple(simple["num"], simple["rest"], simple["des"], simple["id"])
    hard = pc.invert(is_simple)
    full = _parse_full(pc.filter(s, hard), pc.filter(countries, hard))
    if not easy.any():
        return full
    quick = _parse_simple(*(pc.filter(simple[k], is_simple) for k in ("num", "rest", "des", "id")))
    n = len(values)
    # Each line's place among the plain lines, or after them among the others: one take
    # puts both sets of results back in line order.
    where = np.empty(n, dtype=np.int64)
    where[easy] = np.arange(int(easy.sum()))
    where[~easy] = int(easy.sum()) + np.arange(int((~easy).sum()))
    where = pa.array(where)
    out = {}
    for name in _FIELDS:
        both = pa.chunked_array([quick[name].cast(STRING), full[name].cast(STRING)], STRING)
        out[name] = pc.take(both, where).combine_chunks()
    for name in ("present", "po_box", "state"):
        merged = np.empty(n, dtype=full[name].dtype)
        merged[easy] = quick[name]
        merged[~easy] = full[name]
        out[name] = merged
    return out


@functools.lru_cache(maxsize=1)
def street_type_words() -> pa.Array:
    """Words that end a plain street line: street types and directions (any spelling)."""
    t = address_terms()
    words = t[t["kind"].isin(["street_type", "directional"])]["term"].unique().tolist()
    return strings(sorted(words))


def _flags(s: pa.Array) -> tuple[pa.Array, pa.Array, pa.Array]:
    """(no fixed address, placeholder, either) for prepared street lines.

    The word lists hold no digits, so only lines without a digit are compared with them.
    """
    n = len(s)
    no_digit = pc.invert(pc.fill_null(pc.match_substring_regex(s, pattern=r"\d"), True))
    words = pc.filter(s, no_digit)
    compact = tidy(replace_where(words, r"[^\p{L}\p{N} ]", r"[^\p{L}\p{N}]+", " "))
    no_fixed = pc.or_(
        pc.fill_null(pc.is_in(compact, value_set=strings(sorted(NO_FIXED_LINES))), False),
        pc.fill_null(pc.match_substring_regex(compact, pattern=r"^general delivery\b"), False),
    )
    placeholder = pc.or_(
        pc.fill_null(pc.is_in(compact, value_set=strings(sorted(PLACEHOLDER_LINES))), False),
        repeated_character(pc.replace_substring(compact, pattern=" ", replacement="")),
    )
    falses = pa.array(np.zeros(n, dtype=bool))
    no_fixed = pc.replace_with_mask(falses, no_digit, no_fixed)
    placeholder = pc.replace_with_mask(falses, no_digit, placeholder)
    # "123 Fake St" and lines of zeros ("0", "000") hold digits.
    placeholder = pc.or_(placeholder, pc.fill_null(
        pc.match_substring_regex(s, pattern=r"\bfake\b|^[0\s]+$"), False))
    return no_fixed, placeholder, pc.or_(no_fixed, placeholder)


def _join_words(parts: list[pa.Array]) -> pa.Array:
    """Join aligned arrays with spaces, skipping nulls; null where every part is null."""
    n = len(parts[0])
    some = pa.array(np.zeros(n, dtype=bool))
    for part in parts:
        some = pc.or_(some, pc.is_valid(part))
    if not pc.any(some).as_py():
        return pa.nulls(n, STRING)
    subset = [pc.filter(part, some) for part in parts]
    joined = pc.binary_join_element_wise(*subset, pa.scalar(" ", STRING),
                                         null_handling="replace", null_replacement="")
    return pc.replace_with_mask(pa.nulls(n, STRING), some, tidy(joined))


def _parse_simple(number: pa.Array, words: pa.Array, designator: pa.Array, ident: pa.Array) -> dict:
    """Plain lines: house number, street words and perhaps one numbered unit."""
    n = len(number)
    terms, standards, _, _ = _unit_terms()
    street_name = map_words(words, *street_terms())
    unit, unit_text = _unit_label(designator, ident, terms, standards)
    space = pa.scalar(" ", STRING)
    line = pc.binary_join_element_wise(number, street_name, space)
    return {
        "house_number": number,
        "unit": unit,
        "street_name": street_name,
        "key": pc.binary_join_element_wise(number, street_name, pc.fill_null(unit, ""),
                                           pa.scalar("|", STRING)),
        "line": pc.coalesce(pc.binary_join_element_wise(line, unit_text, space), line),
        "present": np.ones(n, dtype=bool),
        "po_box": np.zeros(n, dtype=bool),
        "state": np.full(n, OK, dtype=np.int8),
    }


def _parse_full(s: pa.Array, countries: pa.Array) -> dict:
    """Every rule, for prepared lines that are not plain."""
    n = len(s)
    null = pa.scalar(None, STRING)
    present = pc.is_valid(s)
    no_fixed, placeholder, _ = _flags(s)

    # Rural routes and PO boxes: the box number stands in for the house number.
    rural = extract_where(s, _RURAL)
    rural_kind = pc.if_else(
        pc.starts_with(pc.fill_null(rural["kind"], ""), "h"),
        pa.scalar("hc", STRING), pa.scalar("rr", STRING),
    )
    rural_street = pc.binary_join_element_wise(rural_kind, rural["route"], pa.scalar(" ", STRING))
    box = extract_where(s, _PO_BOX)
    is_rural = rural["_hit"]
    is_box = pc.and_(box["_hit"], pc.invert(is_rural))

    terms, standards, numbered, no_number = _unit_terms()
    lead_des = "|".join(w for w in numbered.split("|") if w != "key")
    fl = pa.scalar("fl", STRING)
    units: list[tuple[pa.Array, pa.Array]] = []
    # Unit written first: "Apt 4B, 12 Main St", "Flat 3 Rose Court, 12 High St".
    lead = extract_where(s, r"^(?:(?P<des>" + lead_des + r")\s*#?\s*|#\s*)(?P<id>" + _ID + r")"
                         + _SEP + r"(?P<rest>.+)$")
    units.append(_unit_label(lead["des"], lead["id"], terms, standards))
    s = pc.coalesce(lead["rest"], s)
    floor = extract_where(s, _FLOOR_LEAD)
    units.append(_unit_label(pc.if_else(floor["_hit"], fl, null), floor["id"], terms, standards))
    s = pc.coalesce(floor["rest"], s)
    # Units written last, peeled off from the end: "... Bldg 2 Apt 4", "... #4B Rear",
    # "... 3rd Floor". Each part found goes in front of those found before, so the unit
    # keeps the order in which it was written.
    numbered_tail = r"(?:(?P<des>" + numbered + r")\s*#?\s*|#\s*)(?P<id>" + _ID + r")$"
    tails = (
        ("bare", r"(?P<des>" + no_number + r")$"),
        ("numbered", numbered_tail),
        ("numbered", numbered_tail),
        ("numbered", numbered_tail),
        ("floor", r"(?P<id>\d+)(?:st|nd|rd|th)\s+(?:floor|fl)$"),
        ("bare", r"(?P<des>" + no_number + r")$"),
    )
    trailing: list[tuple[pa.Array, pa.Array]] = []
    for kind, tail in tails:
        s, found = _cut_tail(s, tail)
        if kind == "floor":
            des, ident = pc.if_else(found["_hit"], fl, null), found["id"]
        else:
            des, ident = found["des"], found.get("id", pa.nulls(n, STRING))
        trailing.insert(0, _unit_label(des, ident, terms, standards))
    units.extend(trailing)

    # Canada "101-123 Main St" and Australia/New Zealand "5/12 Smith St": unit, then number.
    house = pa.nulls(n, STRING)
    for codes, pattern in ((["CA"], _CA_UNIT), (["AU", "NZ"], _AU_UNIT)):
        here = pc.fill_null(pc.is_in(countries, value_set=strings(codes)), False)
        found = extract_where(pc.if_else(here, s, null), pattern)
        hashed = pc.binary_join_element_wise(pa.scalar("#", STRING), found["unit"],
                                             pa.scalar("", STRING))
        units.insert(0, (found["unit"], hashed))
        house = pc.coalesce(house, found["num"])
        s = pc.coalesce(found["rest"], s)

    # Keep the comma-separated part that starts with a number ("Rose Court, 12 High St");
    # in GB and IE a first part without a number is a house name ("Rose Cottage, Mill Lane").
    segment = extract_where(s, _SEGMENT, gate=",")
    segment_line = pc.if_else(segment["_hit"], segment["line"], null)
    has_comma = pc.fill_null(pc.match_substring(s, ","), False)
    house_name_here = pc.and_(
        pc.and_(has_comma, pc.is_null(segment_line)),
        pc.fill_null(pc.is_in(countries, value_set=strings(["GB", "IE", "IM", "JE", "GG"])), False),
    )
    named = extract_where(pc.if_else(house_name_here, s, null), _HOUSE_NAME)
    house_name = tidy(named["name"])
    line = pc.coalesce(segment_line, named["line"], s)
    line = tidy(pc.replace_substring(line, pattern=",", replacement=" "))

    number = extract_where(line, _NUMBER)
    house = pc.coalesce(house, number["num"])
    rest = replace_where(line, _NUMBER, _NUMBER, "")
    rest = blank_to_null(pc.utf8_trim_whitespace(rest))
    number_first = pc.is_in(countries, value_set=strings(list(NUMBER_FIRST)))
    last_here = pc.and_(pc.invert(pc.fill_null(number_first, False)), pc.is_null(house))
    last = extract_where(pc.if_else(last_here, rest, null), _NUMBER_LAST)
    house = pc.coalesce(house, last["num"], house_name)
    rest = pc.coalesce(last["rest"], rest)
    rest = tidy(replace_where(rest, r"[#/\-]", r"[#/\-]+", " "))
    street_name = map_words(rest, *street_terms())

    # Boxes and rural routes replace the parsed parts.
    box_num = box["num"]
    house = pc.if_else(is_rural, rural["num"], pc.if_else(is_box, box_num, house))
    street_name = pc.if_else(is_rural, rural_street,
                             pc.if_else(is_box, pa.scalar("po box", STRING), street_name))
    unit = _join_words([u for u, _ in units])
    unit_text = _join_words([shown for _, shown in units])
    unit = pc.if_else(pc.or_(is_box, is_rural), null, unit)

    state = np.full(n, OK, dtype=np.int8)
    state[pc.is_null(house).to_numpy(zero_copy_only=False)] = NO_NUMBER
    state[pc.is_null(street_name).to_numpy(zero_copy_only=False)] = NO_STREET_NAME
    state[placeholder.to_numpy(zero_copy_only=False)] = PLACEHOLDER_LINE
    state[no_fixed.to_numpy(zero_copy_only=False)] = NO_FIXED
    present_np = present.to_numpy(zero_copy_only=False)
    state[~present_np] = ABSENT

    key = pc.binary_join_element_wise(
        house, street_name, pc.fill_null(unit, ""), pa.scalar("|", STRING)
    )
    house_street = pc.binary_join_element_wise(house, street_name, pa.scalar(" ", STRING),
                                               null_handling="replace", null_replacement="")
    line_out = tidy(pc.binary_join_element_wise(house_street, unit_text, pa.scalar(" ", STRING),
                                                null_handling="replace", null_replacement=""))
    line_out = pc.if_else(is_box, pc.binary_join_element_wise(
        pa.scalar("po box", STRING), box_num, pa.scalar(" ", STRING)), line_out)
    return {
        "house_number": house,
        "unit": unit,
        "street_name": street_name,
        "key": pc.if_else(pa.array(state == OK), key, null),
        "line": line_out,
        "present": present_np,
        "po_box": pc.fill_null(is_box, False).to_numpy(zero_copy_only=False),
        "state": state,
    }
