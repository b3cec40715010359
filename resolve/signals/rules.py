"""The table of risk rules: packaged defaults plus the user's overrides.

Which patterns deserve a flag, and how loud, is a policy choice each institution makes for
itself. The rules therefore live in a TOML file the user can read (resolve/data/signal_rules.toml)
and override piece by piece; this module loads and checks them so that a typo in a rule or
parameter name is refused instead of silently ignored.
"""

from __future__ import annotations

import copy
import tomllib
from importlib import resources
from pathlib import Path

from resolve.errors import InputError

SEVERITIES = ("low", "medium", "high")
RULE_KEYS = ("severity", "enabled", "description", "parameters")
_KIND_WORDS = {bool: "true or false", int: "a number", float: "a number", str: "text",
               list: "a list", dict: "a table"}


def _default_rules() -> dict:
    text = resources.files("resolve").joinpath("data/signal_rules.toml").read_text("utf-8")
    return tomllib.loads(text)


def load_rules(path: str | Path | None = None) -> dict:
    """Rules keyed by code: ``{code: {code, severity, enabled, description, parameters}}``.

    Starts from the packaged defaults and, when ``path`` is given, applies the overrides in
    that TOML file (rule fields replace, parameters merge one by one).
    """
    overrides = None
    if path is not None:
        try:
            overrides = tomllib.loads(Path(path).read_text("utf-8"))
        except FileNotFoundError:
            raise InputError(f"Signal rule file {path} does not exist; check the path.") from None
        except tomllib.TOMLDecodeError as exc:
            raise InputError(f"Signal rule file {path} is not valid TOML ({exc}); fix the file.") from None
    return merge_rules(overrides)


def merge_rules(overrides: dict | None = None, base: dict | None = None) -> dict:
    """Apply ``overrides`` (same shape as the TOML, any subset) to ``base`` (default: packaged)."""
    rules = copy.deepcopy(_default_rules() if base is None else base)
    for code, rule in rules.items():
        rule["code"] = code
        rule.setdefault("parameters", {})
    for code, change in (overrides or {}).items():
        if code not in rules:
            raise InputError(
                f"Unknown signal rule '{code}'; known rules are {', '.join(sorted(rules))}."
            )
        if not isinstance(change, dict):
            raise InputError(f"Signal rule '{code}' must be a table of settings.")
        target = rules[code]
        for key, value in change.items():
            if key == "code":
                continue
            if key not in RULE_KEYS:
                raise InputError(
                    f"Signal rule '{code}' has unknown setting '{key}'; use {', '.join(RULE_KEYS)}."
                )
            if key == "parameters":
                _merge_parameters(code, target["parameters"], value)
            else:
                target[key] = value
        _check(code, target)
    return rules


def _merge_parameters(code: str, params: dict, change: dict) -> None:
    if not isinstance(change, dict):
        raise InputError(f"Parameters of signal rule '{code}' must be a table.")
    for name, value in change.items():
        if name not in params:
            raise InputError(
                f"Signal rule '{code}' has no parameter '{name}'; "
                f"its parameters are {', '.join(sorted(params))}."
            )
        default = params[name]
        numeric = (int, float)
        same_kind = (
            isinstance(value, type(default))
            or (isinstance(default, numeric) and isinstance(value, numeric))
        ) and not (isinstance(value, bool) != isinstance(default, bool))
        if not same_kind:
            raise InputError(
                f"Parameter '{name}' of signal rule '{code}' must be {_KIND_WORDS[type(default)]}, "
                f"like its default {default!r}."
            )
        if isinstance(default, dict):
            params[name] = {**default, **value}
        else:
            params[name] = value


def _check(code: str, rule: dict) -> None:
    if rule.get("severity") not in SEVERITIES:
        raise InputError(
            f"Signal rule '{code}' has severity {rule.get('severity')!r}; use low, medium or high."
        )
    if not isinstance(rule.get("enabled"), bool):
        raise InputError(f"Signal rule '{code}' needs enabled = true or false.")
