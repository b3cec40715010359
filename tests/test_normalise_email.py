"""Tests for resolve.normalise.email.

The reference for syntax is email-validator (validate_email with check_deliverability=False);
the array fast path must never accept what it refuses, and both paths must give the same
result, which is checked on a corpus of tricky addresses and on random text.
"""

from __future__ import annotations

import pandas as pd
import pytest
from email_validator import EmailNotValidError, validate_email
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from resolve.errors import InputError
from resolve.normalise import INVALID, MISSING, PLACEHOLDER, STATUSES, VALID
from resolve.normalise import email as email_module
from resolve.normalise.email import REASONS, load_provider_rules, normalise_emails

COLUMNS = ["value", "status", "reason", "mailbox_key", "domain"]


def norm(values, providers=None):
    return normalise_emails(pd.Series(values, dtype="string"), providers)


def one(text, providers=None):
    return norm([text], providers).iloc[0]


def accepted_by_email_validator(text: str) -> bool:
    """The reference verdict, with the options the module uses (display names allowed)."""
    try:
        validate_email(text, check_deliverability=False, allow_display_name=True)
    except EmailNotValidError:
        return False
    return True


# --- CHECKS.md cases ----------------------------------------------------------------------


@pytest.mark.parametrize("text", [".a@x.com", "a.@x.com", "a..b@x.com"])
def test_dot_atom_dots_are_refused(text):
    # CHECKS.md, RFC 5322 3.2.3: no leading, trailing or doubled dot unless quoted.
    result = one(text)
    assert result["status"] == INVALID
    assert result["reason"] == "bad_local_part"
    assert pd.isna(result["value"]) and pd.isna(result["mailbox_key"])


@pytest.mark.parametrize("text", ["a+b@x.com", "o'neil@x.com"])
def test_dot_atom_specials_are_accepted(text):
    # CHECKS.md, RFC 5322 3.2.3: "+" and "'" are atext.
    result = one(text)
    assert result["status"] == VALID
    assert result["value"] == text


def test_local_part_holds_at_most_64_octets():
    # CHECKS.md, RFC 5321 4.5.3.1: local part at most 64 octets.
    assert one("ab" * 32 + "@x.com")["status"] == VALID
    result = one("ab" * 32 + "c@x.com")
    assert result["status"] == INVALID
    assert result["reason"] == "local_part_too_long"
    # Octets, not characters: 22 times "éb" is 44 characters but 66 octets.
    assert one("éb" * 22 + "@x.com")["reason"] == "local_part_too_long"
    assert one("éb" * 21 + "b@x.com")["status"] == VALID


def test_email_validator_alone_does_not_enforce_the_local_part_limit():
    # CHECKS.md: email-validator 2.3+ enforces the 64-character limit only with strict=True,
    # which is why we apply it ourselves.
    validate_email("ab" * 32 + "c@x.com", check_deliverability=False)
    with pytest.raises(EmailNotValidError):
        validate_email("ab" * 32 + "c@x.com", check_deliverability=False, strict=True)


def test_address_holds_at_most_254_octets():
    # CHECKS.md, RFC 3696 erratum 1690: accept 254, reject 255.
    domain = "d" * 63 + "." + "e" * 63 + "." + "f" * 59 + ".com"
    assert len(domain) == 191
    address_254 = "ab" * 31 + "@" + domain
    assert len(address_254) == 254
    assert one(address_254)["status"] == VALID
    address_255 = "ab" * 31 + "c@" + domain
    assert len(address_255) == 255
    result = one(address_255)
    assert result["status"] == INVALID
    assert result["reason"] == "too_long"
    # The local-part limit is reported first when both are broken.
    assert one("ab" * 33 + "@" + domain)["reason"] == "local_part_too_long"


def test_subaddress_is_not_part_of_the_mailbox():
    # CHECKS.md, RFC 5233: ken+sieve@example.org is user "ken", detail "sieve". example.org
    # is a documentation domain (RFC 2606), so the address is also a placeholder.
    rules = {"providers": {"example.org": {"subaddress_separator": "+"}}}
    result = one("ken+sieve@example.org", rules)
    assert result["mailbox_key"] == "ken@example.org"
    assert result["value"] == "ken+sieve@example.org"
    assert result["status"] == PLACEHOLDER
    assert result["reason"] == "placeholder_domain"


def test_gmail_ignores_dots_and_googlemail_is_the_same_mailbox_domain():
    # CHECKS.md: Gmail ignores dots in consumer addresses (Google Help, answer 7436150);
    # googlemail.com is the same mailbox domain (from memory).
    result = norm(["John.Smith@gmail.com", "johnsmith@GMAIL.com",
                   "j.o.h.n.smith+bank@googlemail.com"])  # fmt: skip
    assert (result["status"] == VALID).all()
    assert set(result["mailbox_key"]) == {"johnsmith@gmail.com"}
    assert result["value"].tolist() == ["John.Smith@gmail.com", "johnsmith@gmail.com",
                                        "j.o.h.n.smith+bank@googlemail.com"]  # fmt: skip
    assert result["domain"].tolist() == ["gmail.com", "gmail.com", "googlemail.com"]


def test_dots_count_where_the_provider_does_not_ignore_them():
    result = norm(["john.smith@company.com", "johnsmith@company.com", "a+b@company.com"])
    assert result["mailbox_key"].tolist() == ["john.smith@company.com", "johnsmith@company.com",
                                              "a+b@company.com"]  # fmt: skip


# --- canonical form -----------------------------------------------------------------------


def test_local_part_as_written_and_domain_lower_case():
    result = one("  John.Smith@Company.COM ")
    assert result["value"] == "John.Smith@company.com"
    assert result["mailbox_key"] == "john.smith@company.com"
    assert result["domain"] == "company.com"


def test_international_domain_is_idna_encoded():
    # Reference: Python's own IDNA codec gives the ASCII form of the domain.
    expected = "bücher.de".encode("idna").decode("ascii")
    assert expected == "xn--bcher-kva.de"
    result = one("Leser@Bücher.de")
    assert result["status"] == VALID
    assert result["value"] == "Leser@" + expected
    assert result["domain"] == expected
    assert result["mailbox_key"] == "leser@" + expected


def test_international_local_part_is_kept():
    result = one("jürgen@example-shop.de")
    assert result["status"] == VALID
    assert result["value"] == "jürgen@example-shop.de"


def test_display_name_is_dropped():
    result = one("Jane Doe <jane.doe@company.com>")
    assert result["status"] == VALID
    assert result["value"] == "jane.doe@company.com"


@pytest.mark.parametrize(
    ("text", "reason"),
    [("john.smith.company.com", "no_at_sign"), ("john@gmail", "bad_domain"),
     ("john@localhost", "bad_domain"), ("john@-x.com", "bad_domain"),
     ("john@x..com", "bad_domain"), ("a@b@c.com", "bad_domain"),
     ("john smith@x.com", "bad_local_part"), ("@x.com", "bad_local_part"),
     ('"john smith"@x.com', "bad_local_part"), ("john@", "bad_domain"),
     ("john@x.c0m1", "bad_domain"), ("john@ab--cd.com", "bad_domain"),
     ("john@mail.test", "bad_domain")],
)  # fmt: skip
def test_invalid_addresses(text, reason):
    result = one(text)
    assert result["status"] == INVALID
    assert result["reason"] == reason
    assert not accepted_by_email_validator(text)


# --- placeholders and missing values -------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "reason"),
    [("none@none.com", "placeholder_local_part"), ("noemail@gmail.com", "placeholder_local_part"),
     ("NoReply@company.com", "placeholder_local_part"),
     ("noreply+x@company.com", "placeholder_local_part"),
     ("n/a@company.com", "placeholder_local_part"), ("someone@example.net", "placeholder_domain"),
     ("someone@mail.example.com", "placeholder_domain"),
     ("someone@shop.example", "placeholder_domain"),
     ("anna@noemail.com", "placeholder_domain"), ("x@x.com", "repeated_characters"),
     ("xxx@gmail.com", "repeated_characters"), ("aa@aaa.org", "repeated_characters"),
     ("n/a", "no_value_text"), ("NONE", "no_value_text"), ("-", "no_value_text")],
)  # fmt: skip
def test_placeholders(text, reason):
    # example.com/.net/.org and .example are reserved by RFC 2606; the rest is common practice.
    result = one(text)
    assert result["status"] == PLACEHOLDER
    assert result["reason"] == reason


@pytest.mark.parametrize("text", ["j@company.io", "anna@gmail.com", "xy@x.com", "ab@gmail.com"])
def test_ordinary_addresses_are_not_placeholders(text):
    assert one(text)["status"] == VALID


def test_missing_values():
    result = norm([None, "", "   "])
    assert (result["status"] == MISSING).all()
    assert result.drop(columns="status").isna().all().all()


# --- provider rules -------------------------------------------------------------------------


def test_built_in_rules():
    rules = load_provider_rules()
    assert rules["providers"]["gmail.com"]["ignore_dots"] is True
    assert "googlemail.com" in rules["providers"]["gmail.com"]["aliases"]
    assert "example.com" in rules["placeholders"]["domains"]
    assert "noreply" in rules["placeholders"]["local_parts"]


def test_rules_file_is_merged_over_the_built_in_table(tmp_path):
    path = tmp_path / "mine.toml"
    path.write_text(
        '[providers."corp.test-bank.com"]\nignore_dots = true\nsubaddress_separator = "-"\n'
        'aliases = ["old-bank.com"]\n\n[placeholders]\nlocal_parts = ["nomailbox"]\n',
        encoding="utf-8",
    )
    rules = load_provider_rules(str(path))
    assert rules["providers"]["gmail.com"]["ignore_dots"] is True  # built-in kept
    assert rules["providers"]["corp.test-bank.com"]["subaddress_separator"] == "-"
    assert "nomailbox" in rules["placeholders"]["local_parts"]
    assert "noreply" in rules["placeholders"]["local_parts"]
    result = norm(["a.b-x@old-bank.com", "ab@corp.test-bank.com", "nomailbox@x.com",
                   "j.smith@gmail.com"], rules)  # fmt: skip
    assert result["mailbox_key"].tolist()[:2] == ["ab@corp.test-bank.com"] * 2
    assert result["status"].tolist()[2] == PLACEHOLDER
    assert result["mailbox_key"].tolist()[3] == "jsmith@gmail.com"


def test_a_dict_passed_in_extends_the_built_in_rules():
    result = norm(["j.smith@gmail.com", "j.smith@corp.com"],
                  {"providers": {"corp.com": {"ignore_dots": True}}})  # fmt: skip
    assert result["mailbox_key"].tolist() == ["jsmith@gmail.com", "jsmith@corp.com"]


@pytest.mark.parametrize(
    "table",
    [{"providers": {"x.com": {"dots": True}}}, {"extra": {}},
     {"providers": {"x.com": {"subaddress_separator": "++"}}},
     {"placeholders": {"names": ["x"]}}, {"providers": {"x.com": {"aliases": "y.com"}}}],
)  # fmt: skip
def test_bad_rules_are_input_errors(table):
    with pytest.raises(InputError):
        norm(["a@b.com"], table)


def test_unreadable_rules_file_is_an_input_error(tmp_path):
    with pytest.raises(InputError):
        load_provider_rules(str(tmp_path / "missing.toml"))
    bad = tmp_path / "bad.toml"
    bad.write_text("[providers\n", encoding="utf-8")
    with pytest.raises(InputError):
        load_provider_rules(str(bad))


# --- the fast path against email-validator --------------------------------------------------

TRICKY = [
    "a@b.co", "A@B.CO", "a.b.c@d.e.fg", "a-b@c-d.com", "a_b@c.com", "a!#$%&'*+/=?^_`{|}~-z@x.com",
    "a@b.c", "a@b.c1", "a@1.2.3.4", "a@[1.2.3.4]", "a@b..com", "a@.b.com", "a@b.com.", "a@-b.com",
    "a@b-.com", "a@b.-com", "a@b_c.com", "a@xn--bcher-kva.de", "a@xn--zzzz.com", "a@ab--c.com",
    "a@a--bc.com", "a@b.local", "a@b.invalid", "a@b.onion", "a@arpa", "a@b.arpa", "a@b.test",
    "a@b.example", "a@localhost", "a b@c.com", "a\tb@c.com", "a(b)@c.com", "a,b@c.com",
    "a;b@c.com", "a:b@c.com", "a\\b@c.com", "a[b]@c.com", '"a"@b.com', '"a b"@c.com',
    "<a@b.com>", "N <a@b.com>", "a@b.com>", "a@@b.com", "@", "a@", "@b.com", ".@b.com", "a.@b.com",
    "..@b.com", "a..b@c.com", "a" * 64 + "@b.com", "a" * 65 + "@b.com", "a@" + "b" * 63 + ".com",
    "a@" + "b" * 64 + ".com", "a@b.c" + "o" * 62, "a@b.c" + "o" * 63, "Postmaster@X.COM",
    "INFO@x.com", "Info.Desk@x.com", "a@B\u00fccher.de", "\u00e9@x.com", "a@x.com\u200b",
    "a@x.c\u00f6m", "a\u0301@x.com", "\u0301a@x.com", "a@\uff58.com", "a\uff20b.com", "a@b.com ",
    "a@b.com\n", "a@b\x00.com", "a\x00@b.com", "1@2.com", "a@2com", "a@b.co-", "a@b.c-o",
    "abc+@x.com", "+abc@x.com", "a+b+c@gmail.com", "-@x.com", "a@x-.y.com", "a@x.y-.com",
]


def test_both_paths_agree_on_tricky_addresses():
    raw = pd.Series(TRICKY, dtype="string")
    fast = email_module._normalise(raw, None, fast_path=True)
    reference = email_module._normalise(raw, None, fast_path=False)
    pd.testing.assert_frame_equal(fast, reference)


def test_every_accepted_address_is_accepted_by_email_validator():
    result = norm(TRICKY)
    usable = result["value"].notna()
    for text, value in zip(pd.Series(TRICKY)[usable.to_numpy()], result.loc[usable, "value"]):
        assert accepted_by_email_validator(text.strip()), text
        assert accepted_by_email_validator(value), value


ASCII_MESS = st.text(alphabet="abcXYZ09._-+@!#'\"<> ()\\,;:[]~", max_size=30)


@settings(max_examples=100, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.one_of(ASCII_MESS, st.emails()), min_size=1, max_size=25))
def test_both_paths_agree_on_random_text(texts):
    raw = pd.Series(texts, dtype="string")
    fast = email_module._normalise(raw, None, fast_path=True)
    reference = email_module._normalise(raw, None, fast_path=False)
    pd.testing.assert_frame_equal(fast, reference)


# --- interface and invariants ---------------------------------------------------------------


def test_output_columns_and_types():
    result = norm(["a@b.com", "bad", None, "none@none.com"])
    assert list(result.columns) == COLUMNS
    assert all(isinstance(t, pd.StringDtype) for t in result.dtypes)
    assert set(result["reason"].dropna()) <= set(REASONS)


def test_empty_input_and_object_dtype():
    assert list(norm([]).columns) == COLUMNS
    result = normalise_emails(pd.Series(["a@b.com", None], dtype=object))
    assert result["status"].tolist() == [VALID, MISSING]


@settings(max_examples=100, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.emails(), min_size=1, max_size=20))
def test_normalising_the_value_gives_the_same_value_and_mailbox(addresses):
    first = norm(addresses)
    kept = first[first["value"].notna()]
    again = norm(kept["value"].tolist())
    assert again["value"].tolist() == kept["value"].tolist()
    assert again["mailbox_key"].tolist() == kept["mailbox_key"].tolist()
    assert again["status"].tolist() == kept["status"].tolist()


@settings(max_examples=100, deadline=None)
@given(st.lists(st.one_of(st.none(), st.text(max_size=40)), max_size=20))
def test_arbitrary_text_never_raises_and_keeps_the_index(texts):
    index = pd.Index([f"r{i}" for i in range(len(texts))][::-1])
    raw = pd.Series(texts, index=index, dtype="string")
    result = normalise_emails(raw)
    assert result.index.equals(raw.index)
    assert set(result["status"]) <= set(STATUSES)
    assert (result["status"][raw.isna()] == MISSING).all()
    assert result["value"].notna().eq(result["mailbox_key"].notna()).all()
    assert result["reason"].isna().eq(result["status"].isin([VALID, MISSING])).all()
