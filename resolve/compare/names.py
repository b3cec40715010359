"""Agreement levels for given names, family names and generation suffixes.

Names are compared on the normalised keys (`given_key`, `family_key`) produced by
`resolve.normalise.names`. Exact and structural checks (same key, same name root, compound
family-name parts) are integer comparisons over one shared vocabulary; spelling similarity
is Jaro-Winkler (Winkler 1990; Jaro 1989) through rapidfuzz, computed once per distinct pair
of names and only for pairs the cheaper checks left open. Jaro-Winkler forgives slips late
in a name and punishes slips early in it (june/uune scores 0.83), so names the similarity
bands leave out get one more test: one typing slip apart (optimal string alignment distance
1; for names shorter than four letters only a swap of two neighbours counts). Swapped given
and family names are found with the same tests applied crosswise, so a swap that also
carries a compound family name, a nickname or a slip is still a swap.

Precedence (the first rule that holds wins):
given name  exact > equivalent root > swapped > initial > very similar > similar > one slip
            > different;
family name exact > compound part > initial > very similar > similar > one slip > different,
and the neutral "swapped" level when the given name took the swap.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from resolve.compare.align import CompareSettings, Vocabulary, lookup, text_column
from resolve.compare.levels import DIFFERENT, FAMILY_NAME, GIVEN_NAME, MISSING, SUFFIX

_NAME_COLUMNS = (
    "given_key",
    "given_root",
    "family_key",
    "family_core",
    "family_first",
    "family_last",
)


@dataclass
class NameTables:
    """Name columns of one run as codes over a shared vocabulary, plus per-record helpers.

    ``columns`` holds one int32 array per record-level column used by `compare_names`:
    the codes of the name columns, ``given_letter``/``family_letter`` (code of the first
    letter, -1 when missing), ``given_single``/``family_single`` (1 when the name is a single
    letter, an initial) and ``suffix`` (code of the generation suffix).
    """

    vocab: Vocabulary
    columns: dict[str, np.ndarray]
    #: Per vocabulary code: the code of its name root where the value occurs as a given name
    #: (``given_root``), else the code itself; lets a family-name field holding "danny" match
    #: a given name "daniel" when the fields are swapped.
    root_of: np.ndarray | None = None


def name_tables(people: pd.DataFrame) -> NameTables:
    """Factorise the name columns (adding `family_last`, the last part of the family name)."""
    people = people.copy(deep=False)
    codes, uniques = pd.factorize(text_column(people, "family_key"))
    last = pc.replace_substring_regex(
        pa.array(np.asarray(uniques.astype(object), dtype=object), type=pa.string()),
        r"^.*[\s\-]",
        "",
    )
    last_values = np.asarray(last.to_pylist() + [None], dtype=object)
    people["family_last"] = pd.array(last_values[codes], dtype="string")
    vocab = Vocabulary.build(people, _NAME_COLUMNS)
    first_letter = vocab.first_letter()
    single = (vocab.lengths() == 1).astype(np.int32)
    columns = dict(vocab.codes)
    for short, col in (("given", "given_key"), ("family", "family_key")):
        columns[f"{short}_letter"] = lookup(first_letter, vocab.codes[col]).astype(np.int32)
        columns[f"{short}_single"] = lookup(single, vocab.codes[col], 0).astype(np.int32)
    suffix = text_column(people, "suffix").str.lower()
    columns["suffix"] = pd.factorize(suffix)[0].astype(np.int32)
    root_of = np.arange(len(vocab.values), dtype=np.int32)
    key, root = vocab.codes["given_key"], vocab.codes["given_root"]
    known = (key >= 0) & (root >= 0)
    root_of[key[known]] = root[known]
    return NameTables(vocab=vocab, columns=columns, root_of=root_of)


def _same_name(x: np.ndarray, y: np.ndarray, root_of: np.ndarray | None) -> np.ndarray:
    """Codes that are the same name: equal, or (where roots are known) the same name root."""
    same = (x >= 0) & (x == y)
    if root_of is not None and root_of.size:
        same |= (x >= 0) & (y >= 0) & (lookup(root_of, x) == lookup(root_of, y))
    return same


def _or_spelled_alike(
    vocab: Vocabulary, x: np.ndarray, y: np.ndarray, agree: np.ndarray, settings: CompareSettings
) -> np.ndarray:
    """``agree``, or else whether names x and y are spelled alike: Jaro-Winkler at least
    the "similar" band, or one typing slip apart. Only rows not yet agreeing are scored."""
    out = agree.copy()
    open_rows = np.flatnonzero(~out & (x >= 0) & (y >= 0))
    if open_rows.size:
        sim, slip = vocab.spelling(
            x[open_rows], y[open_rows], settings.name_similar, settings.name_one_edit_min_length
        )
        out[open_rows] = (sim >= settings.name_similar) | slip
    return out


def _assign(levels: np.ndarray, mask: np.ndarray, code: int) -> None:
    """Set ``code`` where ``mask`` holds and no level was assigned yet (-1)."""
    levels[mask & (levels < 0)] = code


def compare_names(
    names: NameTables,
    A: dict[str, np.ndarray],
    B: dict[str, np.ndarray],
    settings: CompareSettings,
) -> tuple[np.ndarray, np.ndarray]:
    """Given-name and family-name levels (int8) for aligned pairs.

    ``A`` and ``B`` map column names to the values of the first and second record of each
    pair (see `NameTables.columns`).
    """
    vocab = names.vocab
    ga, gb = A["given_key"], B["given_key"]
    fa, fb = A["family_key"], B["family_key"]
    g_code = GIVEN_NAME.code_of
    f_code = FAMILY_NAME.code_of

    g_present = (ga >= 0) & (gb >= 0)
    f_present = (fa >= 0) & (fb >= 0)
    given = np.where(g_present, -1, MISSING).astype(np.int8)
    family = np.where(f_present, -1, MISSING).astype(np.int8)

    # Exact and structural agreement: integer comparisons only.
    _assign(given, g_present & (ga == gb), g_code("exact"))
    _assign(family, f_present & (fa == fb), f_code("exact"))
    ra, rb = A["given_root"], B["given_root"]
    _assign(given, (ra >= 0) & (ra == rb), g_code("equivalent"))

    open_part = np.flatnonzero(family < 0)
    part_cols = ("family_key", "family_core", "family_first", "family_last")
    parts_a = [A[col][open_part] for col in part_cols]
    parts_b = [B[col][open_part] for col in part_cols]
    part_match = np.zeros(open_part.size, dtype=bool)
    for xa in parts_a:
        for xb in parts_b:
            part_match |= (xa >= 0) & (xa == xb)
    family[open_part[part_match]] = f_code("part")

    # Given and family names swapped: checked where neither name agrees directly. Each
    # given name must agree with the other record's family name: the same name (same key or
    # same name root: "daniel" / "danny"), one part of it when it is a compound ("juan" /
    # "juan carlos"), or a similar spelling (Jaro-Winkler >= the "similar" band, or one
    # typing slip).
    rows = np.flatnonzero((given < 0) & (family < 0))
    for first, second in ((A, B), (B, A)):  # each direction narrows the rows for the next
        given_first = first["given_key"][rows]
        agree = _same_name(given_first, second["family_key"][rows], names.root_of)
        for col in part_cols[1:]:
            agree |= (given_first >= 0) & (given_first == second[col][rows])
        agree = _or_spelled_alike(vocab, given_first, second["family_key"][rows], agree, settings)
        rows = rows[agree]
    swapped = np.zeros(ga.shape[0], dtype=bool)
    swapped[rows] = True
    _assign(given, swapped, g_code("swapped"))
    _assign(family, swapped, f_code("swapped"))

    # One side only an initial that matches the other's first letter; then spelling.
    low = min(settings.name_similar, settings.name_close)
    for lv, short, xa, xb, spec in (
        (given, "given", ga, gb, GIVEN_NAME),
        (family, "family", fa, fb, FAMILY_NAME),
    ):
        rows = np.flatnonzero(lv < 0)
        single = (A[f"{short}_single"][rows] | B[f"{short}_single"][rows]) > 0
        initial = single & (A[f"{short}_letter"][rows] == B[f"{short}_letter"][rows])
        lv[rows[initial]] = spec.code_of("initial")
        rows = rows[~initial]
        sim, slip = vocab.spelling(xa[rows], xb[rows], low, settings.name_one_edit_min_length)
        lv[rows[sim >= settings.name_similar]] = spec.code_of("similar")
        lv[rows[sim >= settings.name_close]] = spec.code_of("close")
        lv[rows[slip]] = spec.code_of("one_edit")
        lv[lv < 0] = DIFFERENT
    return given, family


def compare_suffix(A: dict[str, np.ndarray], B: dict[str, np.ndarray]) -> np.ndarray:
    """Generation-suffix levels: missing unless both sides carry one; then same or different."""
    sa, sb = A["suffix"], B["suffix"]
    both = (sa >= 0) & (sb >= 0)
    out = np.where(both, DIFFERENT, MISSING).astype(np.int8)
    out[both & (sa == sb)] = SUFFIX.code_of("same")
    return out
