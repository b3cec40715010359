"""Country values to ISO 3166-1 alpha-2 codes.

Extracts write countries as codes ("US", "USA"), names ("United Kingdom") or local habits
("UK", "England"). Phones, national IDs, dates and postcodes all depend on the country, so
it is normalised first. Two-letter codes that phonenumbers knows as regions pass through;
a small alias table (common practice; ISO 3166-1 for the codes) covers frequent names.
"""

from __future__ import annotations

import re

import pandas as pd
import phonenumbers
import pyarrow as pa
import pyarrow.compute as pc

from resolve.normalise.textkeys import STRING, to_arrow, to_series

_ALIASES = {
    "usa": "US", "u s a": "US", "u s": "US", "united states": "US",
    "united states of america": "US", "america": "US",
    "uk": "GB", "gbr": "GB", "u k": "GB", "united kingdom": "GB", "great britain": "GB",
    "britain": "GB", "england": "GB", "scotland": "GB", "wales": "GB",
    "northern ireland": "GB",
    "can": "CA", "canada": "CA",
    "mex": "MX", "mexico": "MX", "irl": "IE", "ireland": "IE", "aus": "AU",
    "australia": "AU", "nzl": "NZ", "new zealand": "NZ", "deu": "DE", "germany": "DE",
    "fra": "FR", "france": "FR", "esp": "ES", "spain": "ES", "ita": "IT", "italy": "IT",
    "nld": "NL", "netherlands": "NL", "the netherlands": "NL", "holland": "NL",
    "bel": "BE", "belgium": "BE", "che": "CH", "switzerland": "CH", "aut": "AT",
    "austria": "AT", "swe": "SE", "sweden": "SE", "nor": "NO", "norway": "NO",
    "dnk": "DK", "denmark": "DK", "fin": "FI", "finland": "FI", "pol": "PL",
    "poland": "PL", "prt": "PT", "portugal": "PT", "ind": "IN", "india": "IN",
    "chn": "CN", "china": "CN", "jpn": "JP", "japan": "JP", "bra": "BR", "brazil": "BR",
    "phl": "PH", "philippines": "PH", "vnm": "VN", "vietnam": "VN", "viet nam": "VN",
}
_REGIONS = frozenset(phonenumbers.SUPPORTED_REGIONS)
_FOLD = re.compile(r"[^a-z]+")


def _one(value: str) -> str | None:
    folded = _FOLD.sub(" ", value.lower()).strip()
    if len(folded) == 2 and folded.upper() in _REGIONS:
        return folded.upper()
    return _ALIASES.get(folded)


def normalise_countries(raw: pd.Series | None, default: str = "US", index=None) -> pd.Series:
    """Return ISO-2 codes aligned with ``raw``; blanks and unknown values take ``default``.

    Each distinct value is read once (`_one`); the codes are spread back over the records
    with Arrow. Surrounding white space needs no trim first: `_one` folds it away.
    """
    if raw is None:
        return pd.Series(default, index=index, dtype="string")
    encoded = pc.dictionary_encode(to_arrow(raw))
    codes = [_one(u) or default for u in encoded.dictionary.to_pylist()]
    mapped = pc.take(pa.array(codes, STRING), encoded.indices)
    return to_series(pc.fill_null(mapped, default), index=raw.index)
