"""Email addresses: syntax, canonical form, mailbox key and placeholders for a whole column.

Why this module exists: a shared mailbox links records (one person's duplicates, a family
address, a ring of applicants behind one inbox), but only if the same mailbox is recognised
however it was typed: ``J.Smith+bank@GoogleMail.com`` and ``jsmith@gmail.com`` reach one
Gmail inbox. Dummy addresses (``none@none.com``, ``noreply@example.com``) must be caught
before they chain strangers together.

Syntax follows RFC 5321/5322 as checked by the email-validator package (the reference).
Calling it costs tens of microseconds per address, so plainly written ASCII addresses are
decided on whole arrays by rules that reproduce its verdict (the RFC 5322 dot-atom and the
host-name rules it applies); addresses with non-ASCII characters, quotes, angle brackets or
Punycode domains go to email-validator once per distinct value. Tests compare both paths.

Our own rules on top (see docs/normalisation.md): the local part holds at most 64 octets
(RFC 5321 4.5.3.1.1; email-validator enforces this only in strict mode, counting
characters), the address at most 254 octets (RFC 3696 erratum 1690), and quoted local parts
are refused (email-validator's default).
"""

from __future__ import annotations

import copy
import tomllib
from functools import lru_cache
from importlib import resources

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
from email_validator import EmailNotValidError, validate_email

from resolve.errors import InputError
from resolve.normalise import INVALID, MISSING, PLACEHOLDER, VALID

LOCAL_PART_MAX_OCTETS = 64  # RFC 5321 4.5.3.1.1
ADDRESS_MAX_OCTETS = 254  # RFC 3696 erratum 1690 (RFC 5321 4.5.3.1.3 path limit less "<>")
DOMAIN_MAX_OCTETS = 253  # RFC 1035 2.3.4 less the final dot, as email-validator counts it

REASONS = (
    "no_at_sign",
    "bad_local_part",
    "bad_domain",
    "local_part_too_long",
    "too_long",
    "no_value_text",
    "placeholder_local_part",
    "placeholder_domain",
    "repeated_characters",
)
OUTPUT_COLUMNS = ("value", "status", "reason", "mailbox_key", "domain")
RULE_KEYS = ("ignore_dots", "subaddress_separator", "aliases")

# RFC 5322 3.2.3 atext; a dot-atom is atext runs joined by single dots.
_ATEXT = r"a-zA-Z0-9!#$%&'*+/=?^_`{|}~\-"
_DOT_ATOM = rf"^[{_ATEXT}]+(?:\.[{_ATEXT}]+)*$"
# Host names (RFC 952 / RFC 1123 2.1): labels of letters, digits and inner hyphens, at most
# 63 long, at least two labels, and (as email-validator requires) a last label that ends in a
# letter. Applied to the lower-cased domain.
_HOST_NAME = (
    r"^[a-z0-9](?:[a-z0-9-]{0,61}[a-z0-9])?(?:\.[a-z0-9](?:[a-z0-9-]{0,61}[a-z0-9])?)*"
    r"\.(?:[a-z0-9][a-z0-9-]{0,61})?[a-z]$"
)
# Refused domains: labels with "--" in third and fourth place (reserved unless Punycode,
# RFC 5890), and the special-use names email-validator refuses (SPECIAL_USE_DOMAIN_NAMES).
_SPECIAL_USE = ("arpa", "invalid", "local", "localhost", "onion", "test")
_REFUSED_NAMES = r"(?:^|\.)[^.]{2}--|(?:^|\.)(?:" + "|".join(_SPECIAL_USE) + r")$"
# RFC 2142 role mailboxes, which email-validator writes in lower case.
_ROLE_MAILBOXES = ("info", "marketing", "sales", "support", "abuse", "noc", "security",
                   "postmaster", "hostmaster", "usenet", "news", "webmaster", "www", "uucp",
                   "ftp")  # fmt: skip
# A local part or first domain label that is one character repeated ("xxx", "aaaa").
_ONE_CHARACTER = "^(?:" + "|".join(
    f"\\Q{c}\\E+" for c in "abcdefghijklmnopqrstuvwxyz0123456789_-.'+"
) + ")$"  # fmt: skip
_ONE_CHARACTER_LABEL = _ONE_CHARACTER[:-1] + r"\."
_NO_VALUE_WORDS = frozenset(
    {"none", "na", "nil", "null", "unknown", "noemail", "nomail", "notgiven", "notprovided",
     "notavailable", "unavailable", "refused", "declined", "tbc", "tba", "tbd", "x", "xx", "xxx"}
)  # fmt: skip
_CHECK_DOMAIN = "x.org"  # a plain valid domain, used to tell local-part from domain faults

_REASON_CODE = {None: 0, **{name: i + 1 for i, name in enumerate(REASONS)}}
_STATUSES = [VALID, INVALID, PLACEHOLDER, MISSING]
_STATUS_CODE = {name: i + 1 for i, name in enumerate(_STATUSES)}
_LARGE = pa.large_string()


# --- provider rules -----------------------------------------------------------------------


def load_provider_rules(path: str | None = None) -> dict:
    """The built-in provider and placeholder table, with the TOML file at ``path`` over it.

    The result has ``providers`` (domain -> ``ignore_dots``, ``subaddress_separator``,
    ``aliases``) and ``placeholders`` (``local_parts``, ``domains``). A provider given in the
    file replaces the named settings of the built-in one; placeholder lists are added to.
    """
    rules = copy.deepcopy(_built_in_rules())
    if path is None:
        return rules
    try:
        with open(path, "rb") as handle:
            extra = tomllib.load(handle)
    except OSError as exc:
        raise InputError(
            f"Cannot read the email provider file {path}: {exc.strerror}; check the path."
        ) from exc
    except tomllib.TOMLDecodeError as exc:
        raise InputError(
            f"The email provider file {path} is not valid TOML ({exc}); fix it."
        ) from exc
    return merge_provider_rules(rules, extra)


@lru_cache(maxsize=1)
def _built_in_rules() -> dict:
    text = resources.files("resolve").joinpath("data/email_providers.toml").read_text("utf-8")
    return _checked(tomllib.loads(text), "the built-in email provider table")


def merge_provider_rules(base: dict, extra: dict | None) -> dict:
    """``extra`` (same shape as `load_provider_rules` gives) merged over ``base``."""
    out = copy.deepcopy(base)
    if not extra:
        return out
    extra = _checked(extra, "the email provider rules passed in")
    for domain, rule in extra["providers"].items():
        out["providers"][domain] = {**out["providers"].get(domain, {}), **rule}
    for key in ("local_parts", "domains"):
        merged = set(out["placeholders"][key]) | set(extra["placeholders"][key])
        out["placeholders"][key] = sorted(merged)
    return out


def _checked(table: dict, where: str) -> dict:
    """Validate and complete a provider table; raise InputError naming the fix."""
    if not isinstance(table, dict) or set(table) - {"providers", "placeholders"}:
        raise InputError(
            f"In {where}, use only the sections [providers.\"<domain>\"] and [placeholders]."
        )
    providers = {}
    for domain, rule in (table.get("providers") or {}).items():
        if not isinstance(rule, dict) or set(rule) - set(RULE_KEYS):
            raise InputError(
                f"In {where}, provider {domain!r} may only set ignore_dots, "
                "subaddress_separator and aliases."
            )
        clean = {}
        if "ignore_dots" in rule:
            clean["ignore_dots"] = bool(rule["ignore_dots"])
        if "subaddress_separator" in rule:
            sep = rule["subaddress_separator"] or ""
            if not isinstance(sep, str) or len(sep) > 1:
                raise InputError(
                    f"In {where}, provider {domain!r} needs a one-character "
                    "subaddress_separator such as \"+\", or \"\" for none."
                )
            clean["subaddress_separator"] = sep
        if "aliases" in rule:
            if not isinstance(rule["aliases"], list):
                raise InputError(
                    f"In {where}, the aliases of {domain!r} must be a list of domains."
                )
            clean["aliases"] = [str(a).strip().lower() for a in rule["aliases"]]
        providers[str(domain).strip().lower()] = clean
    placeholders = table.get("placeholders") or {}
    if set(placeholders) - {"local_parts", "domains"}:
        raise InputError(f"In {where}, [placeholders] may only hold local_parts and domains.")
    return {
        "providers": providers,
        "placeholders": {
            key: sorted({str(v).strip().lower() for v in placeholders.get(key, [])})
            for key in ("local_parts", "domains")
        },
    }


def _domain_table(domains: list[str], rules: dict) -> dict[str, np.ndarray]:
    """Per distinct domain: canonical mailbox domain, dot rule, separator, placeholder flag."""
    providers = rules["providers"]
    alias_of = {}
    for domain, rule in providers.items():
        for alias in rule.get("aliases", []):
            alias_of[alias] = domain
    dummy = rules["placeholders"]["domains"]
    canonical, ignore_dots, separator, is_dummy = [], [], [], []
    for domain in domains:
        home = alias_of.get(domain, domain)
        rule = providers.get(home, {})
        canonical.append(home)
        ignore_dots.append(bool(rule.get("ignore_dots", False)))
        separator.append(rule.get("subaddress_separator", "") or "")
        is_dummy.append(any(domain == d or domain.endswith("." + d) for d in dummy))
    return {
        "canonical": np.array(canonical, dtype=object),
        "ignore_dots": np.array(ignore_dots, dtype=bool),
        "separator": np.array(separator, dtype=object),
        "placeholder": np.array(is_dummy, dtype=bool),
    }


# --- syntax -------------------------------------------------------------------------------


def _np(arr) -> np.ndarray:
    return arr.to_numpy(zero_copy_only=False)


def _join(local, domain) -> pa.Array:
    """local + "@" + domain, element-wise."""
    at, nothing = pa.scalar("@", _LARGE), pa.scalar("", _LARGE)
    return pc.binary_join_element_wise(local, at, domain, nothing)


def _validate_one(text: str) -> tuple[str | None, str | None, str | None]:
    """One address through email-validator: (value, domain, reason code name)."""
    try:
        checked = validate_email(
            text, check_deliverability=False, allow_display_name=True, strict=True
        )
    except EmailNotValidError as exc:
        return None, None, _reason_for(text, str(exc))
    except Exception:  # never let one odd value stop a run
        return None, None, "bad_local_part"
    local, domain = checked.local_part, checked.ascii_domain
    if len(local.encode("utf-8")) > LOCAL_PART_MAX_OCTETS:
        return None, None, "local_part_too_long"
    value = f"{local}@{domain}"
    if len(value.encode("utf-8")) > ADDRESS_MAX_OCTETS:
        return None, None, "too_long"
    return value, domain, None


def _reason_for(text: str, message: str) -> str:
    """Our reason code for an address email-validator refused."""
    lowered = message.lower()
    if "must have an @-sign" in lowered or "at-sign" in lowered or "commercial at" in lowered:
        return "no_at_sign"
    if "too long before the @-sign" in lowered:
        return "local_part_too_long"
    if "too long" in lowered:
        return "too_long"
    if "<" in text:  # display-name form: trust the message
        return "bad_domain" if "after the @-sign" in lowered else "bad_local_part"
    # Is the part before the first @ acceptable with a plain domain? Then the domain is at fault.
    local = text.partition("@")[0]
    try:
        validate_email(f"{local}@{_CHECK_DOMAIN}", check_deliverability=False, strict=True)
    except EmailNotValidError:
        return "bad_local_part"
    except Exception:
        return "bad_local_part"
    return "bad_domain"


def _syntax(texts: pa.Array, fast_path: bool) -> dict:
    """Decide syntax for distinct trimmed strings: status, reason, value, local part, domain."""
    n = len(texts)
    status = np.full(n, _STATUS_CODE[INVALID], dtype=np.int8)
    reason = np.zeros(n, dtype=np.int8)
    empty = _np(pc.equal(texts, ""))
    has_at = _np(pc.match_substring(texts, "@"))
    status[empty] = _STATUS_CODE[MISSING]

    # No @: "no_at_sign", or a word that means "no email".
    no_at = np.flatnonzero(~has_at & ~empty)
    if len(no_at):
        words = pc.utf8_lower(texts.take(pa.array(no_at)))
        letters = pc.replace_substring_regex(words, r"[^\pL]", "")
        no_value = _np(pc.is_in(letters, value_set=pa.array(sorted(_NO_VALUE_WORDS))))
        no_value |= _np(pc.match_substring_regex(words, r"^[^\pL\pN]*$"))
        codes = (_REASON_CODE["no_value_text"], _REASON_CODE["no_at_sign"])
        reason[no_at] = np.where(no_value, *codes)
        status[no_at[no_value]] = _STATUS_CODE[PLACEHOLDER]

    parts = pc.split_pattern(pc.if_else(has_at, texts, "@"), "@", max_splits=1)
    local, domain = pc.list_element(parts, 0), pc.list_element(parts, 1)  # split at the first @
    special = _np(pc.match_substring_regex(texts, '["<>]'))  # quotes or a display name
    local_octets = _np(pc.binary_length(local))
    local_long = has_at & ~special & (local_octets > LOCAL_PART_MAX_OCTETS)
    too_long = has_at & ~special & ~local_long & (_np(pc.binary_length(texts)) > ADDRESS_MAX_OCTETS)
    reason[local_long] = _REASON_CODE["local_part_too_long"]
    reason[too_long] = _REASON_CODE["too_long"]
    todo = has_at & ~local_long & ~too_long

    # Fast path: ASCII without quotes or angle brackets, decided by the RFC rules directly.
    low_domain = pc.utf8_lower(domain)
    fast = todo & ~special & _np(pc.string_is_ascii(texts))
    fast &= ~_np(pc.match_substring(low_domain, "xn--"))  # Punycode: leave to email-validator
    if not fast_path:
        fast[:] = False
    local_ok = _np(pc.match_substring_regex(local, _DOT_ATOM))
    domain_ok = _np(pc.match_substring_regex(low_domain, _HOST_NAME))
    domain_ok &= ~_np(pc.match_substring_regex(low_domain, _REFUSED_NAMES))
    domain_ok &= _np(pc.binary_length(domain)) <= DOMAIN_MAX_OCTETS
    reason[fast & ~local_ok] = _REASON_CODE["bad_local_part"]
    reason[fast & local_ok & ~domain_ok] = _REASON_CODE["bad_domain"]
    good = fast & local_ok & domain_ok
    status[good] = _STATUS_CODE[VALID]
    value_local = local
    short = good & (local_octets <= max(map(len, _ROLE_MAILBOXES)))
    if short.any():  # RFC 2142 role names are written in lower case
        lowered = pc.utf8_lower(local.filter(pa.array(short)))
        role = _np(pc.is_in(lowered, value_set=pa.array(_ROLE_MAILBOXES)))
        if role.any():
            rows = np.zeros(n, dtype=bool)
            rows[np.flatnonzero(short)[role]] = True
            lowered = lowered.filter(pa.array(role))
            value_local = pc.replace_with_mask(local, pa.array(rows), lowered)

    null = pa.scalar(None, _LARGE)
    value = pc.if_else(good, _join(value_local, low_domain), null)
    out_domain = pc.if_else(good, low_domain, null)
    out_local = pc.if_else(good, value_local, null)

    # Slow path: email-validator once per distinct remaining string.
    slow = np.flatnonzero(todo & ~fast)
    if len(slow):
        values, domains, locals_ = [None] * len(slow), [None] * len(slow), [None] * len(slow)
        seen: dict[str, tuple] = {}  # a repeated text is validated once
        for j, text in enumerate(texts.take(pa.array(slow)).to_pylist()):
            if text not in seen:
                seen[text] = _validate_one(text)
            v, d, why = seen[text]
            if why is None:
                values[j], domains[j], locals_[j] = v, d, v.rpartition("@")[0]
                status[slow[j]] = _STATUS_CODE[VALID]
            else:
                reason[slow[j]] = _REASON_CODE[why]
        rows = np.zeros(n, dtype=bool)
        rows[slow] = True
        rows = pa.array(rows)
        value = pc.replace_with_mask(value, rows, pa.array(values, _LARGE))
        out_domain = pc.replace_with_mask(out_domain, rows, pa.array(domains, _LARGE))
        out_local = pc.replace_with_mask(out_local, rows, pa.array(locals_, _LARGE))
    return {
        "status": status,
        "reason": reason,
        "value": value,
        "local": out_local,
        "domain": out_domain,
    }


# --- mailbox keys and placeholders -------------------------------------------------------


def _cut_subaddress(local: pa.Array, sep: str, rows: np.ndarray) -> pa.Array:
    """``local`` with "<sep>detail" removed where ``rows`` is set (RFC 5233 subaddress)."""
    rows = rows & _np(pc.match_substring(local, sep)) & ~_np(pc.starts_with(local, sep))
    if not rows.any():
        return local
    cut = pc.list_element(pc.split_pattern(local.filter(pa.array(rows)), sep, max_splits=1), 0)
    return pc.replace_with_mask(local, pa.array(rows), cut)


def _subset(arr: pa.Array, rows: np.ndarray) -> pa.Array:
    return arr if len(rows) == len(arr) else arr.take(pa.array(rows))


def _mailboxes(found: dict, rules: dict) -> None:
    """Add mailbox keys and judge placeholders for the valid addresses, in place."""
    status, reason = found["status"], found["reason"]
    good = np.flatnonzero(status == _STATUS_CODE[VALID])
    n = len(status)
    found["mailbox_key"] = pa.nulls(n, _LARGE)
    if len(good) == 0:
        return
    local = pc.utf8_lower(_subset(found["local"], good))
    domain = _subset(found["domain"], good)
    domain_codes = domain.dictionary_encode()
    table = _domain_table(domain_codes.dictionary.to_pylist(), rules)
    codes = _np(domain_codes.indices)

    # Subaddress (RFC 5233): cut at the first separator, unless the local part starts with it.
    mailbox = local
    separators = table["separator"][codes]
    for sep in sorted(set(table["separator"]) - {""}):
        mailbox = _cut_subaddress(mailbox, sep, separators == sep)
    dots = table["ignore_dots"][codes]
    if dots.any():
        undotted = pc.replace_substring(mailbox.filter(pa.array(dots)), ".", "")
        mailbox = pc.replace_with_mask(mailbox, pa.array(dots), undotted)
    home = pa.array(table["canonical"], _LARGE).take(domain_codes.indices)
    key = _join(mailbox, home)

    # Placeholders: listed local parts (with or without "+detail"), listed domains, repeats.
    words = pa.array(rules["placeholders"]["local_parts"], _LARGE)
    before_plus = _cut_subaddress(local, "+", np.ones(len(good), dtype=bool))
    dummy_local = _np(pc.is_in(local, value_set=words))
    dummy_local |= _np(pc.is_in(before_plus, value_set=words))
    repeated = _np(pc.match_substring_regex(local, _ONE_CHARACTER))
    if repeated.any():  # "xxx@..." or "x@x.com": one character repeated
        rows = np.flatnonzero(repeated)
        one_local, one_domain = local.take(pa.array(rows)), domain.take(pa.array(rows))
        long_run = _np(pc.utf8_length(one_local)) >= 3
        same = _np(pc.match_substring_regex(one_domain, _ONE_CHARACTER_LABEL))
        same &= _np(pc.equal(pc.utf8_slice_codeunits(one_local, 0, 1),
                             pc.utf8_slice_codeunits(one_domain, 0, 1)))  # fmt: skip
        repeated[rows] = long_run | same
    dummy_domain = table["placeholder"][codes]

    why = np.zeros(len(good), dtype=np.int8)
    why[repeated] = _REASON_CODE["repeated_characters"]
    why[dummy_domain] = _REASON_CODE["placeholder_domain"]
    why[dummy_local] = _REASON_CODE["placeholder_local_part"]
    flagged = why > 0
    status[good[flagged]] = _STATUS_CODE[PLACEHOLDER]
    reason[good[flagged]] = why[flagged]

    if len(good) == n:
        found["mailbox_key"] = key
        return
    where = np.full(n, len(good), dtype=np.int64)
    where[good] = np.arange(len(good))
    found["mailbox_key"] = pa.concat_arrays([key, pa.nulls(1, _LARGE)]).take(pa.array(where))


# --- the stage function -------------------------------------------------------------------


def normalise_emails(raw: pd.Series, providers: dict | None = None) -> pd.DataFrame:
    """Normalise a column of email addresses.

    ``providers`` is a table of the shape `load_provider_rules` returns (provider rules and
    placeholder lists), merged over the built-in one. Returns a DataFrame with the index of
    ``raw`` and the columns ``value`` (the address with its domain lower-cased and in ASCII
    form), ``status``, ``reason``, ``mailbox_key`` (the key that finds one mailbox however it
    was written) and ``domain``; value, key and domain are filled for valid addresses and
    placeholders.
    """
    return _normalise(raw, providers)


def _normalise(raw: pd.Series, providers: dict | None, *, fast_path: bool = True) -> pd.DataFrame:
    rules = merge_provider_rules(_built_in_rules(), providers)
    # Each present value is read where it stands: addresses are nearly all distinct, so
    # hashing them to find repeats costs more than it saves. The slow path below still
    # sees each distinct text once.
    text = _arrow_strings(raw.astype(pd.StringDtype("pyarrow")))
    present = text.is_valid().to_numpy(zero_copy_only=False)
    codes = np.full(len(text), -1, dtype=np.int64)
    codes[present] = np.arange(int(present.sum()), dtype=np.int64)
    texts = pc.utf8_trim_whitespace(text if present.all() else text.filter(pa.array(present)))
    found = _syntax(texts, fast_path)
    _mailboxes(found, rules)
    for name in ("value", "domain"):  # only valid addresses and placeholders keep them
        keep = pa.array(np.isin(found["status"], [_STATUS_CODE[VALID], _STATUS_CODE[PLACEHOLDER]]))
        found[name] = pc.if_else(keep, found[name], pa.scalar(None, _LARGE))
    return _gather(found, codes, raw.index)


def _arrow_strings(uniques) -> pa.Array:
    """The values of a pandas Series or Index as one Arrow large_string array."""
    arr = pa.array(uniques.array)
    if isinstance(arr, pa.ChunkedArray):
        arr = arr.combine_chunks() if arr.num_chunks else pa.array([], arr.type)
    return arr.cast(pa.large_string())


def _gather(found: dict, codes: np.ndarray, index: pd.Index) -> pd.DataFrame:
    """Spread per-distinct results over the records (code -1: missing record)."""
    n = len(found["status"])
    rows = pa.array(np.where(codes < 0, n, codes).astype(np.int32))
    in_place = n == len(codes)  # every record has a value, in its own row: nothing to move
    columns = {}
    for name in ("value", "mailbox_key", "domain"):
        if in_place:
            columns[name] = found[name].cast(_LARGE)
            continue
        arr = pa.concat_arrays([found[name].cast(_LARGE), pa.nulls(1, _LARGE)])
        columns[name] = arr.take(rows)
    for name, labels in (("status", _STATUSES), ("reason", list(REASONS))):
        dictionary = pa.array([None, *labels], type=_LARGE)
        per = np.append(found[name], _STATUS_CODE[MISSING] if name == "status" else 0)
        columns[name] = dictionary.take(pa.array(per.astype(np.int32)).take(rows))
    return pd.DataFrame(
        {name: pd.Series(pd.arrays.ArrowStringArray(columns[name]), index=index, copy=False)
         for name in OUTPUT_COLUMNS},
        index=index,
        copy=False,
    )  # fmt: skip
