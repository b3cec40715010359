"""The workbench's key map: every binding with an id, a key, an action and a tooltip.

Defaults live in ``tui/keys.toml`` (shipped with the package). Each screen takes its
`Binding` list from here, so the footer and the key list explain themselves, and a reviewer
can remap any binding by its id without touching the code: a ``[keys]`` table of
``id = "key"`` in ``~/.config/resolve/keys.toml`` (personal) or ``<project>/keys.toml``
(shared by a team; it wins over the personal file), or a file passed to `make_app`. The
environment variable ``RESOLVE_KEYS`` names another personal file (tests point it at
nothing). The overrides are handed to Textual's keymap (`App.set_keymap`), which swaps the
keys of bindings by id at run time.
"""

from __future__ import annotations

import os
import tomllib
from dataclasses import dataclass
from pathlib import Path

from textual.binding import Binding

from resolve.errors import ResolveError

DEFAULTS_FILE = Path(__file__).with_name("keys.toml")
USER_FILE = Path("~/.config/resolve/keys.toml")
PROJECT_FILE = "keys.toml"
SCREENS = ("app", "queue", "cluster", "split", "note", "confirm", "thresholds", "keys")


@dataclass(frozen=True)
class KeySpec:
    """One binding as written in keys.toml."""

    id: str
    screen: str
    key: str
    action: str
    label: str
    tooltip: str
    show: bool = True
    key_display: str | None = None

    def binding(self) -> Binding:
        """The Textual binding for this spec (with its default key)."""
        return Binding(self.key, self.action, self.label, show=self.show,
                       key_display=self.key_display, tooltip=self.tooltip, id=self.id)


class KeyMapError(ResolveError):
    """A key-map file that cannot be used; the message says which file and what to fix."""


def _read_toml(path: Path) -> dict:
    try:
        return tomllib.loads(path.read_text(encoding="utf-8"))
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise KeyMapError(f"{path} is not valid TOML ({exc}); fix or remove the file.") from None


def load_specs(path: Path = DEFAULTS_FILE) -> list[KeySpec]:
    """Read the default bindings; checks ids are unique and screens known."""
    data = _read_toml(path)
    specs = []
    for entry in data.get("binding", []):
        try:
            spec = KeySpec(**entry)
        except TypeError as exc:
            raise KeyMapError(f"{path}: a binding is malformed ({exc}).") from None
        if spec.screen not in SCREENS:
            raise KeyMapError(f"{path}: binding {spec.id} names an unknown screen {spec.screen!r}.")
        specs.append(spec)
    ids = [s.id for s in specs]
    if len(set(ids)) != len(ids):
        raise KeyMapError(f"{path}: binding ids must be unique.")
    return specs


_SPECS: list[KeySpec] | None = None


def default_specs() -> list[KeySpec]:
    """The shipped bindings (read once)."""
    global _SPECS
    if _SPECS is None:
        _SPECS = load_specs()
    return _SPECS


def bindings_for(screen: str) -> list[Binding]:
    """The `Binding` list of one screen, for its ``BINDINGS`` class attribute."""
    return [s.binding() for s in default_specs() if s.screen == screen]


def read_overrides(path: Path) -> dict[str, str]:
    """The ``[keys]`` table of one remap file (id -> key text); {} when the file is absent."""
    path = Path(path).expanduser()
    if not path.is_file():
        return {}
    keys = _read_toml(path).get("keys", {})
    if not isinstance(keys, dict) or not all(isinstance(v, str) and v.strip() for v in keys.values()):
        raise KeyMapError(f'{path}: [keys] must map binding ids to key names, e.g. '
                          f'"cluster.accept" = "ctrl+y".')
    return {str(k): v.replace(" ", "") for k, v in keys.items()}


def remap_files(project_dir: str | Path | None, extra: str | Path | None = None) -> list[Path]:
    """Remap files in the order applied (later wins): personal, project, explicit."""
    home = Path(os.environ.get("RESOLVE_KEYS", str(USER_FILE))).expanduser()
    files = [home]
    if project_dir is not None:
        files.append(Path(project_dir) / PROJECT_FILE)
    if extra is not None:
        files.append(Path(extra))
    return files


@dataclass
class KeyMap:
    """The bindings in force: defaults with the reviewer's remaps applied."""

    specs: list[KeySpec]
    overrides: dict[str, str]
    warnings: list[str]

    @classmethod
    def load(cls, project_dir: str | Path | None = None, extra: str | Path | None = None,
             use_personal: bool = True) -> "KeyMap":
        """Defaults plus the remap files that exist. Unknown ids and clashes become warnings."""
        specs = default_specs()
        known = {s.id for s in specs}
        overrides: dict[str, str] = {}
        warnings: list[str] = []
        files = remap_files(project_dir, extra)
        if not use_personal:
            files = files[1:]
        for path in files:
            for binding_id, key in read_overrides(path).items():
                if binding_id not in known:
                    warnings.append(f"{path}: there is no binding {binding_id!r}; "
                                    "see the key list (?) for the ids.")
                    continue
                overrides[binding_id] = key
        keymap = cls(specs, overrides, warnings)
        keymap.warnings.extend(keymap.clashes())
        return keymap

    def key_of(self, binding_id: str) -> str:
        """The key text in force for a binding id."""
        spec = next(s for s in self.specs if s.id == binding_id)
        return self.overrides.get(binding_id, spec.key)

    def display_of(self, binding_id: str) -> str:
        """How the key is shown to the reviewer."""
        spec = next(s for s in self.specs if s.id == binding_id)
        if binding_id in self.overrides or not spec.key_display:
            return ", ".join(pretty_key(k) for k in self.key_of(binding_id).split(","))
        return spec.key_display

    def for_screen(self, screen: str) -> list[KeySpec]:
        """The specs of one screen, in file order."""
        return [s for s in self.specs if s.screen == screen]

    def clashes(self) -> list[str]:
        """Warnings for two bindings of one screen (or of a screen and 'app') on one key."""
        out = []
        for screen in SCREENS:
            if screen == "app":
                continue
            seen: dict[str, str] = {}
            for spec in self.for_screen("app") + self.for_screen(screen):
                for key in self.key_of(spec.id).split(","):
                    if key in seen and seen[key] != spec.id:
                        out.append(f"keys {key!r}: {seen[key]} and {spec.id} clash on the "
                                   f"{screen} screen; remap one of them.")
                    seen[key] = spec.id
        return out


_PRETTY = {"question_mark": "?", "slash": "/", "left_square_bracket": "[",
           "right_square_bracket": "]", "escape": "Esc", "enter": "Enter", "space": "Space",
           "left": "←", "right": "→", "up": "↑", "down": "↓", "tab": "Tab"}


def pretty_key(key: str) -> str:
    """A key name as a person reads it: ``ctrl+s`` -> ``Ctrl+s``, ``slash`` -> ``/``.

    Single letters keep their case: ``a`` and ``A`` (shift+a) are different keys.
    """
    parts = key.split("+")
    out = [p.capitalize() for p in parts[:-1]]
    last = parts[-1]
    out.append(_PRETTY.get(last, last if len(last) == 1 else last.capitalize()))
    return "+".join(out)
