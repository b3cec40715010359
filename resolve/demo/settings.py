"""Settings of the demo scenario: the rates a user can change and the summary of a run.

The demo is the ground truth for every later measurement, so its knobs are explicit and
validated here: `DemoRates` holds every share and messiness rate (the command line passes
``--rate name=value`` through `DemoRates.from_overrides`), and `DemoSummary` reports what was
written. The invented institutions, channel names, labels and fixed dates live here too, so
that every other demo module (and the docs) use the same words.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import asdict, dataclass, field, fields, replace
from pathlib import Path
from typing import Mapping

from resolve.errors import ResolveError

INSTITUTION = "Tallowmere Community Credit Union"
CARD_BUSINESS = "Brightfern Card Services"

CHANNELS = ("branch", "app", "card_portfolio")
COUNTRIES = ("US", "GB", "CA")

GENUINE = "genuine"
DUPLICATE = "duplicate"
FABRICATED = "fabricated"
STOLEN_ID = "stolen_id"
SECOND_ID = "second_id"
NEVER_ISSUED = "never_issued"
PLACEHOLDER = "placeholder"
LABELS = (GENUINE, DUPLICATE, FABRICATED, STOLEN_ID, SECOND_ID, NEVER_ISSUED, PLACEHOLDER)
RING_LABELS = (FABRICATED, STOLEN_ID, SECOND_ID, NEVER_ISSUED)

HARD_CASES = (
    "twins",
    "father_son",
    "shared_mailbox_spouses",
    "same_name_same_birth",
    "late_duplicate",
    "transliteration",
    "compound_family_name",
    "initials",
)

# Every tag the truth file's `variation` column can hold, with what it means.
VARIATION_TAGS: dict[str, str] = {
    "typo_given": "one keyboard slip (substitution, deletion, insertion, transposition) in the given name",
    "typo_family": "one keyboard slip in the family name",
    "nickname": "an informal given name (Bill for William)",
    "accent_dropped": "accents left out (Jose for José)",
    "accent_added": "accents added (José for Jose)",
    "names_swapped": "given and family names in each other's fields",
    "birth_day_month_swapped": "birth day and month exchanged",
    "phone_new": "a different mobile number",
    "email_new": "a different email address",
    "email_case": "the email written in other letter case",
    "email_plus_tag": "a +tag added to the mailbox name",
    "email_dots": "dots added to or removed from a Gmail mailbox name",
    "id_transposed": "two neighbouring digits of the national ID exchanged",
    "moved": "a new address (and landline)",
    "blank_mobile": "mobile left blank",
    "blank_email": "email left blank",
    "blank_address": "address line left blank",
    "blank_birth": "birth date left blank",
    "id_missing": "national ID left blank",
    "upper_case": "name and address typed in upper case",
    "stray_spaces": "leading, trailing or doubled spaces in a name",
    "street_abbreviated": "street type abbreviated (Street -> St)",
    "date_format": "birth date in another format than the channel's usual one",
    "phone_format": "phones in another format than the channel's usual one",
    "id_format": "national ID with other separators than the channel's usual ones",
    "placeholder_phone": "a call-centre number in place of the customer's phone",
    "placeholder_email": "a placeholder email (none@none.com ...)",
    "placeholder_id": "a placeholder national ID (000-00-0000, 123-45-6789 ...)",
    "maiden_name": "the family name before marriage (hard case)",
    "transliteration": "another spelling of a name written from another script (hard case)",
    "family_hyphen": "a compound family name written with a hyphen (hard case)",
    "family_part": "only the first part of a compound family name (hard case)",
    "given_initial": "the given name as an initial (hard case)",
    "late_record": "opened six or more years after the first record (hard case)",
    "family_name_changed": "a new family name (hard case)",
    "ring_phone": "a phone from the ring's shared pool",
    "ring_email": "an email from the ring's shared pool",
    "ring_address": "the ring's mail-drop address",
    "second_id_record": "the identity's second record, carrying its second national ID",
}

# Fixed dates keep the output independent of the day it is generated on.
REFERENCE_DATE = dt.date(2025, 6, 30)  # "today" for the scenario: the extract date
HISTORY_START = dt.date(2010, 7, 1)  # earliest account opening (about 15 years)
APP_LAUNCH = dt.date(2016, 3, 1)  # the app channel exists from this day
RING_START = dt.date(2019, 1, 1)  # identity rings open accounts from this day

EXTRACT_COLUMNS = (
    "Cust No",
    "Channel",
    "First Name",
    "Surname",
    "Customer Name",
    "DOB",
    "Mobile",
    "Home Tel",
    "E-mail",
    "Alt Email",
    "SSN/TIN",
    "ID Country",
    "Address Line 1",
    "Town",
    "ZIP/Postcode",
    "Country",
    "Opened",
)
TRUTH_COLUMNS = (
    "record_id",
    "person_id",
    "household_id",
    "ring_id",
    "label",
    "hard_case",
    "variation",
    "clean_national_id",
    "clean_id_country",
)


class DemoSettingsError(ResolveError):
    """A demo setting (record count or rate) is out of range or unknown."""


@dataclass(frozen=True)
class DemoRates:
    """Every rate of the demo scenario a user can set; all are shares between 0 and 1.

    Shares of the extract:
      duplicate_share    records that are a later record of a genuine person
      ring_share         records of fabricated identities in synthetic identity rings
      placeholder_share  genuine records carrying a placeholder phone, email or ID
    Shares of genuine persons:
      household_share    persons living in a household of two or more customers
      uk_share, canada_share   persons living in the UK / Canada (the rest in the US)
      hard_case_share    persons taking part in a hard case (twins, Jr/Sr, ...)
    Channels (shares of records; branch takes the rest):
      app_share, card_share
    National IDs:
      card_missing_id_share  card portfolio records without a national ID
      missing_id_share       branch and app records without a national ID
    Messiness of duplicate records (chance per duplicate record):
      typo_rate, app_typo_rate (one edit in a name; the app has more), nickname_rate,
      name_swap_rate, birth_date_swap_rate, phone_change_rate, email_change_rate,
      email_variant_rate (case, Gmail dots, +tags), id_transposition_rate, move_rate,
      accent_change_rate, date_format_mix_rate, phone_format_mix_rate, id_format_mix_rate
    Messiness of any record:
      blank_rate (per optional field), upper_case_rate, stray_space_rate,
      street_abbreviation_rate
    """

    duplicate_share: float = 0.20
    ring_share: float = 0.01
    placeholder_share: float = 0.01
    household_share: float = 0.15
    uk_share: float = 0.08
    canada_share: float = 0.07
    hard_case_share: float = 0.02
    app_share: float = 0.35
    card_share: float = 0.30
    card_missing_id_share: float = 0.60
    missing_id_share: float = 0.04
    typo_rate: float = 0.10
    app_typo_rate: float = 0.25
    nickname_rate: float = 0.12
    name_swap_rate: float = 0.03
    birth_date_swap_rate: float = 0.04
    phone_change_rate: float = 0.15
    email_change_rate: float = 0.15
    email_variant_rate: float = 0.25
    id_transposition_rate: float = 0.03
    move_rate: float = 0.12
    accent_change_rate: float = 0.50
    date_format_mix_rate: float = 0.15
    phone_format_mix_rate: float = 0.25
    id_format_mix_rate: float = 0.20
    blank_rate: float = 0.03
    upper_case_rate: float = 0.06
    stray_space_rate: float = 0.04
    street_abbreviation_rate: float = 0.30

    def __post_init__(self) -> None:
        for f in fields(self):
            value = getattr(self, f.name)
            if (isinstance(value, bool) or not isinstance(value, (int, float))
                    or not 0.0 <= float(value) <= 1.0):
                raise DemoSettingsError(
                    f"Rate {f.name} must be a number between 0 and 1, not {value!r}."
                )
        if self.duplicate_share + self.ring_share > 0.8:
            raise DemoSettingsError(
                "duplicate_share plus ring_share must stay at or below 0.8; lower one of them."
            )
        if self.uk_share + self.canada_share > 1.0:
            raise DemoSettingsError("uk_share plus canada_share must not exceed 1; lower one.")
        if self.app_share + self.card_share > 1.0:
            raise DemoSettingsError("app_share plus card_share must not exceed 1; lower one.")
        if self.placeholder_share > 0.5:
            raise DemoSettingsError("placeholder_share must stay at or below 0.5.")

    @classmethod
    def names(cls) -> tuple[str, ...]:
        """The rate names a user can set, in declaration order."""
        return tuple(f.name for f in fields(cls))

    @classmethod
    def from_overrides(cls, overrides: Mapping[str, object] | None = None) -> "DemoRates":
        """Build rates from defaults plus ``{name: value}`` overrides (values may be text).

        Names may use dashes or underscores (``ring-share`` or ``ring_share``). An unknown
        name or a value that is not a number between 0 and 1 raises `DemoSettingsError`.
        """
        base = cls()
        if not overrides:
            return base
        known = set(cls.names())
        changes: dict[str, float] = {}
        for raw_name, raw_value in overrides.items():
            name = str(raw_name).strip().replace("-", "_").lower()
            if name not in known:
                raise DemoSettingsError(
                    f"Unknown demo rate {raw_name!r}; use one of: {', '.join(cls.names())}."
                )
            try:
                value = float(str(raw_value).strip().rstrip("%")) / (
                    100.0 if str(raw_value).strip().endswith("%") else 1.0
                )
            except ValueError:
                raise DemoSettingsError(
                    f"Rate {name} needs a number between 0 and 1, not {raw_value!r}."
                ) from None
            changes[name] = value
        return replace(base, **changes)

    def as_dict(self) -> dict[str, float]:
        """The rates as a plain dictionary (for summaries and the README)."""
        return asdict(self)


@dataclass
class DemoSummary:
    """What `generate_demo` wrote: counts per label and hard case, and the file paths."""

    out_dir: Path
    records: int
    persons: int
    households: int
    rings: int
    seed: int
    labels: dict[str, int] = field(default_factory=dict)
    hard_cases: dict[str, int] = field(default_factory=dict)
    files: dict[str, Path] = field(default_factory=dict)

    def lines(self) -> list[str]:
        """A short plain-text summary, one fact per line (the CLI prints these)."""
        out = [
            f"{self.records:,} records of {self.persons:,} persons "
            f"({self.households:,} households, {self.rings:,} identity rings), seed {self.seed}",
        ]
        out.append(
            "labels: " + ", ".join(f"{k} {v:,}" for k, v in self.labels.items() if v)
        )
        if any(self.hard_cases.values()):
            out.append(
                "hard cases (records): "
                + ", ".join(f"{k} {v:,}" for k, v in self.hard_cases.items() if v)
            )
        for name, path in self.files.items():
            out.append(f"{name}: {path}")
        return out
