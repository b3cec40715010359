"""Normalisers: turn raw identifier strings into canonical values with a status and a reason.

Every normaliser works on a whole pandas Series at once and returns a DataFrame aligned with
its input (same index). The common columns are:

- ``value``  canonical form, or <NA> when there is nothing usable
- ``status`` one of ``valid``, ``invalid``, ``placeholder``, ``missing``
- ``reason`` a short code saying why the status is not ``valid`` (<NA> when valid)

See docs/normalisation.md for every rule and its source.
"""

VALID = "valid"
INVALID = "invalid"
PLACEHOLDER = "placeholder"
MISSING = "missing"
STATUSES = (VALID, INVALID, PLACEHOLDER, MISSING)
