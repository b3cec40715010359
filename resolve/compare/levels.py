"""The catalogue of agreement levels: what each `lvl_<field>` number means.

Every compared field gets a small integer level per candidate pair. The numbering rule is the
same for all fields:

- level 0 is *missing*: one side (or both) has nothing usable, so the field says nothing;
- level 1 is *different*: both sides have a value and they disagree;
- higher levels are stronger agreement, up to the top level (exact agreement).

A few levels are *neutral*: like level 0 they carry weight 0 and are left out of the EM
likelihood. The only one besides "missing" is the family-name level used when given and
family names are swapped; the swap is weighed once, under the given name.

Levels marked ``exact`` are exact agreement on one value; the scoring stage can replace their
u probability with the frequency of that value (term-frequency adjustment). The scoring stage,
the model file and `explain_pair` all read level names and labels from here. Code outside
this package should look levels up by name (`FieldSpec.code_of("exact")`): numbers other
than 0 (missing) and 1 (different) may change when a level is added, as they did when the
name fields gained "one_edit".
"""

from __future__ import annotations

from dataclasses import dataclass

MISSING = 0
DIFFERENT = 1


@dataclass(frozen=True)
class Level:
    """One agreement level of one field."""

    code: int
    name: str
    label: str
    neutral: bool = False
    exact: bool = False


@dataclass(frozen=True)
class FieldSpec:
    """A compared field: its levels and the value the term-frequency adjustment looks at."""

    name: str
    label: str
    levels: tuple[Level, ...]
    tf_value: str | None = None

    @property
    def column(self) -> str:
        """Name of the level column in the pairs table."""
        return f"lvl_{self.name}"

    @property
    def weight_column(self) -> str:
        """Name of the match-weight column in the pairs table."""
        return f"w_{self.name}"

    def level(self, code: int) -> Level:
        """The level with this code; raises KeyError for an unknown code."""
        for lvl in self.levels:
            if lvl.code == code:
                return lvl
        raise KeyError(f"{self.name} has no level {code}")

    def code_of(self, name: str) -> int:
        """The code of the level called ``name``."""
        for lvl in self.levels:
            if lvl.name == name:
                return lvl.code
        raise KeyError(f"{self.name} has no level named {name!r}")

    @property
    def n_levels(self) -> int:
        """One more than the highest level code."""
        return max(lvl.code for lvl in self.levels) + 1


_SLIP = "one typing slip apart (a letter changed, dropped or added, or two swapped)"


def _missing(what: str) -> Level:
    return Level(MISSING, "missing", f"{what} missing on one side", neutral=True)


GIVEN_NAME = FieldSpec(
    "given_name",
    "given name",
    (
        _missing("given name"),
        Level(DIFFERENT, "different", "given names differ"),
        Level(2, "initial", "one side is only an initial, and it matches"),
        Level(3, "one_edit", _SLIP),
        Level(4, "similar", "similar spelling"),
        Level(5, "close", "very similar spelling"),
        Level(6, "equivalent", "equivalent given names (same name root, e.g. a nickname)"),
        Level(7, "swapped", "given and family names swapped"),
        Level(8, "exact", "same given name", exact=True),
    ),
    tf_value="given_key",
)

FAMILY_NAME = FieldSpec(
    "family_name",
    "family name",
    (
        _missing("family name"),
        Level(DIFFERENT, "different", "family names differ"),
        Level(2, "initial", "one side is only an initial, and it matches"),
        Level(3, "one_edit", _SLIP),
        Level(4, "similar", "similar spelling"),
        Level(5, "close", "very similar spelling"),
        Level(6, "part", "one part of a compound family name matches"),
        Level(7, "exact", "same family name", exact=True),
        Level(
            8,
            "swapped",
            "given and family names swapped (weighed under the given name)",
            neutral=True,
        ),
    ),
    tf_value="family_key",
)

SUFFIX = FieldSpec(
    "suffix",
    "generation suffix",
    (
        _missing("generation suffix"),
        Level(DIFFERENT, "different", "different generation suffixes (e.g. jr and sr)"),
        Level(2, "same", "same generation suffix"),
    ),
)

BIRTH_DATE = FieldSpec(
    "birth_date",
    "birth date",
    (
        _missing("birth date"),
        Level(DIFFERENT, "different", "birth dates differ"),
        Level(2, "same_year", "same birth year; the full date is missing on one side"),
        Level(3, "one_part", "one of year, month or day differs"),
        Level(4, "year_off_by_one", "year off by one, same month and day"),
        Level(5, "day_month_swapped", "day and month swapped"),
        Level(6, "exact", "same birth date", exact=True),
    ),
    tf_value="birth_date",
)

NATIONAL_ID = FieldSpec(
    "national_id",
    "national ID",
    (
        _missing("usable national ID"),
        Level(DIFFERENT, "different", "both carry national IDs and none match"),
        Level(2, "one_edit", "same ID type, one typing slip apart"),
        Level(3, "exact", "same national ID", exact=True),
    ),
    tf_value="national_id",
)

PHONE = FieldSpec(
    "phone",
    "phone",
    (
        _missing("usable phone"),
        Level(DIFFERENT, "different", "both have phones and none is shared"),
        Level(2, "shared_fixed", "share a landline or service number", exact=True),
        Level(3, "shared_mobile", "share a mobile or personal number", exact=True),
    ),
    tf_value="phone",
)

EMAIL = FieldSpec(
    "email",
    "email",
    (
        _missing("usable email"),
        Level(DIFFERENT, "different", "both have emails and none is shared"),
        Level(2, "same_local_part", "same mailbox name at another domain"),
        Level(3, "shared", "share an email mailbox", exact=True),
    ),
    tf_value="email",
)

ADDRESS = FieldSpec(
    "address",
    "address",
    (
        _missing("address"),
        Level(DIFFERENT, "different", "addresses differ"),
        Level(2, "close", "similar street in the same postcode or city"),
        Level(3, "number_postcode", "same house number and postcode"),
        Level(4, "exact", "same address", exact=True),
    ),
    tf_value="address_key",
)

#: Every compared field, in the order of the `lvl_` columns.
FIELDS: tuple[FieldSpec, ...] = (
    GIVEN_NAME,
    FAMILY_NAME,
    SUFFIX,
    BIRTH_DATE,
    NATIONAL_ID,
    PHONE,
    EMAIL,
    ADDRESS,
)

FIELD_BY_NAME: dict[str, FieldSpec] = {spec.name: spec for spec in FIELDS}


def field_spec(name: str) -> FieldSpec:
    """The catalogue entry for a field name such as ``"birth_date"``."""
    return FIELD_BY_NAME[name]
