"""The mapping roles: what each input column can mean to the pipeline.

A role is a meaning (given name, phone, national ID...), not a column name. Roles marked
``multi`` may take several source columns (a record can carry a mobile and a home phone).
Header synonyms are the words customer extracts commonly use for each role (common practice
in bank and card-issuer extracts); detection matches them after folding case and punctuation.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Role:
    name: str
    multi: bool
    synonyms: tuple[str, ...]
    description: str


ROLES: tuple[Role, ...] = (
    Role("record_id", False, (
        "record id", "record", "id", "cust ref", "customer ref", "customer reference",
        "cust no", "customer no", "customer number", "cust num", "cust id", "customer id",
        "client id", "client no", "client number", "party id", "account id", "account number",
        "acct no", "ref", "reference", "cif", "member id", "member no", "member number", "uid",
    ), "the record's own identifier in its source system (required)"),
    Role("given_name", False, (
        "given name", "first name", "firstname", "fname", "forename", "forenames",
        "first", "given", "christian name", "name first",
    ), "given (first) name"),
    Role("middle_name", False, (
        "middle name", "middle", "middle names", "mname", "middle initial",
    ), "middle name(s) or initial"),
    Role("family_name", False, (
        "family name", "last name", "lastname", "lname", "surname", "last", "family",
        "name last",
    ), "family (last) name"),
    Role("full_name", False, (
        "full name", "name", "customer name", "client name", "account name", "holder name",
        "cardholder name", "card holder name", "party name", "member name",
    ), "the whole name in one field, when given and family names are not split"),
    Role("birth_date", False, (
        "birth date", "date of birth", "dob", "birthdate", "birthday", "d o b", "born",
        "birth", "date birth",
    ), "date of birth"),
    Role("phone", True, (
        "phone", "telephone", "tel", "mobile", "mobile phone", "mobile no", "mobile number",
        "cell", "cell phone", "cellphone", "home phone", "home tel", "work phone", "work tel",
        "phone number", "phone no", "tel no", "contact number", "landline", "day phone",
        "evening phone", "alt phone", "other phone", "msisdn",
    ), "a phone number (several columns allowed)"),
    Role("email", True, (
        "email", "e mail", "email address", "e mail address", "mail", "alt email",
        "alternate email", "other email", "personal email", "work email", "contact email",
    ), "an email address (several columns allowed)"),
    Role("national_id", True, (
        "national id", "ssn", "social security number", "social security no", "tin",
        "tax id", "taxpayer id", "tax number", "itin", "sin", "social insurance number",
        "nino", "ni number", "national insurance number", "ssn tin", "ssn itin", "id number",
        "government id", "gov id", "national identifier", "nid", "tax identifier",
    ), "a national identity or tax number (several columns allowed)"),
    Role("national_id_country", False, (
        "national id country", "id country", "tax id country", "tin country",
        "issuing country", "id issuing country", "tax residence", "tax country",
    ), "country that issued the national ID (ISO two-letter code)"),
    Role("street", True, (
        "street", "address", "address line 1", "address1", "addr1", "addr line 1",
        "street address", "address line1", "line 1", "address line 2", "address2", "addr2",
        "line 2", "residential address", "home address", "street line",
    ), "street address (several columns are joined in order)"),
    Role("city", False, (
        "city", "town", "locality", "city town", "town city", "municipality", "suburb",
    ), "city or town"),
    Role("postcode", False, (
        "postcode", "post code", "postal code", "zip", "zip code", "zipcode", "zip postcode",
        "postcode zip", "zip postal code", "postal",
    ), "postcode / ZIP code"),
    Role("region", False, (
        "state", "province", "county", "region", "state province",
    ), "state, province or county"),
    Role("country", False, (
        "country", "country code", "nationality country", "residence country",
        "country of residence", "ctry",
    ), "country of the address (ISO two-letter code or a name)"),
    Role("created_at", False, (
        "created at", "created", "opened", "open date", "opened on", "date opened",
        "account opened", "onboarded", "onboarding date", "registration date",
        "created on", "creation date", "signup date", "sign up date", "application date",
    ), "when the record was created (account opening date)"),
    Role("source", False, (
        "source", "channel", "system", "source system", "origin", "sales channel",
    ), "the system or channel the record came from"),
)

ROLE_BY_NAME: dict[str, Role] = {r.name: r for r in ROLES}
MULTI_ROLES = frozenset(r.name for r in ROLES if r.multi)
REQUIRED_ROLES = ("record_id",)
NAME_ROLES = ("given_name", "family_name", "full_name")
