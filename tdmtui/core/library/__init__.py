"""The drug library: clinical values as data, each with its source.

Files:
    common.toml           values shared by every drug (renal rules, conditions, ...)
    drugs/<drug>.toml     one file per drug (windows, limits, targets, rounding, ...)
    models/<model>.toml   one file per published population model

A leaf is a table ``{value = ..., source = "..."}``. :class:`Rules` flattens
the files to dotted keys (``targets.auc24``) and lays a local protocol's
overrides on top, remembering where each value came from.
"""

from __future__ import annotations

import hashlib
import sys
from dataclasses import dataclass, field
from functools import lru_cache
from importlib import resources
from pathlib import Path
from typing import Any

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - Python 3.10
    import tomli as tomllib

from tdmtui.core.errors import InputError

#: Version of the library data as a whole; bump when any value changes.
LIBRARY_VERSION = "2026.12.4"

DRUGS = ("vancomycin", "gentamicin", "tobramycin", "amikacin")


def _read(name: str) -> dict[str, Any]:
    return tomllib.loads(resources.files(__package__).joinpath(name).read_text("utf-8"))


def flatten(tree: dict[str, Any], prefix: str = "") -> dict[str, tuple[Any, str]]:
    """Flatten ``{a: {b: {value, source}}}`` to ``{"a.b": (value, source)}``.

    Tables without ``value`` are descended into; other keys (plain lists or
    strings such as the conditions list) are kept with the source of their
    table where it has one.
    """
    out: dict[str, tuple[Any, str]] = {}
    for key, item in tree.items():
        path = f"{prefix}{key}"
        if isinstance(item, dict) and "value" in item:
            out[path] = (item["value"], str(item.get("source", "")))
        elif isinstance(item, dict):
            out.update(flatten(item, path + "."))
            out.setdefault(path, (item, str(item.get("source", ""))))
        else:
            out[path] = (item, "")
    return out


@lru_cache(maxsize=None)
def _common_flat() -> dict[str, tuple[Any, str]]:
    return flatten(_read("common.toml"))


def common_number(key: str) -> float:
    """A number of the common library (common.toml) by dotted key, for code given no drug's Rules."""
    return float(_common_flat()[key][0])


@lru_cache(maxsize=None)
def never_exceed(drug: str) -> dict[str, tuple[float, str]]:
    """The library's absolute limits for a drug (``never_exceed.*``): no protocol can set or raise them."""
    return {k.removeprefix("never_exceed."): (float(v), src) for k, (v, src) in flatten(_read(f"drugs/{drug}.toml")).items()
            if k.startswith("never_exceed.") and not isinstance(v, dict)}


@lru_cache(maxsize=None)
def _drug_flat(drug: str) -> dict[str, tuple[Any, str]]:
    flat = flatten(_read("common.toml"))
    flat.update(flatten(_read(f"drugs/{drug}.toml")))
    return flat


@lru_cache(maxsize=None)
def library_digest() -> str:
    """sha256 over every library file, to record what numbers a result used."""
    h = hashlib.sha256()
    root = resources.files(__package__)
    for sub in ("", "drugs", "models"):
        folder = root.joinpath(sub) if sub else root
        for entry in sorted(folder.iterdir(), key=lambda p: p.name):
            if entry.name.endswith(".toml"):
                h.update(entry.name.encode())
                h.update(entry.read_bytes())
    return h.hexdigest()


def model_files(drug: str | None = None) -> list[dict[str, Any]]:
    """Population model files, parsed (see models/*.toml): every one, or only one drug's.

    A model file is named ``<drug>-<id rest>.toml`` after its ``id`` (the library tests check it), so
    one drug's models are found by name and no other file is parsed.
    """
    root = resources.files(__package__).joinpath("models")
    prefix = "" if drug is None else f"{drug}-"
    return [tomllib.loads(p.read_text("utf-8")) for p in sorted(root.iterdir(), key=lambda p: p.name)
            if p.name.endswith(".toml") and p.name.startswith(prefix)]


@dataclass
class Protocol:
    """A local protocol file: overrides per drug (and ``common``), with a name and digest."""

    name: str
    sha256: str
    overrides: dict[str, dict[str, tuple[Any, str]]] = field(default_factory=dict)
    #: ``[local_codes]``: a site's ``system|code`` -> meaning for FHIR import (tdmtui.core.fhir.codes)
    local_codes: dict[str, Any] = field(default_factory=dict)


def load_protocol(path: str | Path) -> Protocol:
    """Read a local protocol TOML file.

    Shape: ``name = "..."`` then tables shaped like the library,
    e.g. ``[vancomycin.targets.auc24] value = [400.0, 550.0] source = "..."``
    and ``[common.renal.scr_floor_mg_dl] value = 0.8 source = "..."``.

    Raises:
        InputError: naming ``protocol`` (or the bad key) when unreadable.
    """
    from tdmtui.core.bounds import read_case_bytes

    p = Path(path)
    data = read_case_bytes(p, "protocol", 512 * 1024)
    try:
        tree = tomllib.loads(data.decode("utf-8"))
    except RecursionError:
        raise InputError("protocol", f"{p} is nested too deeply") from None
    except (UnicodeDecodeError, tomllib.TOMLDecodeError) as exc:
        raise InputError("protocol", f"{p} is not valid TOML: {exc}") from exc
    return protocol_from_tree(tree, hashlib.sha256(data).hexdigest(), p.stem)


def protocol_from_tree(tree: dict[str, Any], sha256: str, default_name: str = "protocol") -> Protocol:
    """A protocol from its parsed TOML tree, every key and value checked against the schema.

    Raises:
        InputError: naming the key (``protocol.<section>.<key>``).
    """
    from tdmtui.core.library.protocolcheck import check_section
    from tdmtui.core.library.schema import SECTIONS

    tree = dict(tree)
    name = tree.pop("name", default_name)
    if not isinstance(name, str):
        raise InputError("protocol.name", "expected text")
    proto = Protocol(name, sha256)
    for section, body in tree.items():
        if section == "local_codes":
            from tdmtui.core.library.localcodes import parse_local_codes

            proto.local_codes = parse_local_codes(body, tuple(DRUGS))
            continue
        if section in SECTIONS:
            SECTIONS[section](body, f"protocol.{section}")
            continue
        if section not in DRUGS and section != "common":
            raise InputError(f"protocol.{section}", "expected a drug id, 'common' or 'local_codes'")
        if not isinstance(body, dict):
            raise InputError(f"protocol.{section}", "expected a table")
        check_section(section, body, set(_common_flat() if section == "common" else _drug_flat(section)))
        proto.overrides[section] = flatten(body)
    return proto


def default_protocol_path() -> Path:
    """``$XDG_CONFIG_HOME/tdmtui/protocol.toml`` (or ``~/.config/...``)."""
    import os

    base = os.environ.get("XDG_CONFIG_HOME") or str(Path.home() / ".config")
    return Path(base) / "tdmtui" / "protocol.toml"


def protocol_or_default(path: str | Path | None) -> Protocol | None:
    """The protocol given, else the default file when it exists, else None."""
    if path:
        return load_protocol(path)
    default = default_protocol_path()
    return load_protocol(default) if default.is_file() else None


class Rules:
    """One drug's library values with a protocol's overrides on top.

    Args:
        drug: a library drug id.
        protocol: optional local protocol.

    Raises:
        InputError: naming ``drug`` when the id is not in the library.
    """

    def __init__(self, drug: str, protocol: Protocol | None = None) -> None:
        if drug not in DRUGS:
            raise InputError("drug", f"{drug!r} is not in the drug library ({', '.join(DRUGS)})")
        self.drug = drug
        self.protocol = protocol
        self._values: dict[str, tuple[Any, str, str]] = {
            k: (v, src, "library") for k, (v, src) in _drug_flat(drug).items()
        }
        if protocol:
            for section in ("common", drug):
                for k, (v, src) in protocol.overrides.get(section, {}).items():
                    self._values[k] = (v, src or f"local protocol {protocol.name}", "protocol")

    def __contains__(self, key: str) -> bool:
        return key in self._values

    def value(self, key: str) -> Any:
        """The value at a dotted key. Raises KeyError for an unknown key."""
        return self._values[key][0]

    def get(self, key: str, default: Any = None) -> Any:
        """The value at a dotted key, or ``default``."""
        return self._values[key][0] if key in self._values else default

    def source(self, key: str) -> str:
        """``library`` or ``protocol``: where the value came from."""
        return self._values[key][2]

    def citation(self, key: str) -> str:
        """The source text behind a value."""
        return self._values[key][1]

    def keys(self) -> list[str]:
        """All dotted keys."""
        return sorted(self._values)

    def with_value(self, key: str, value: Any, citation: str) -> Rules:
        """A copy with one value replaced by a rule derived from others (its library/protocol origin kept)."""
        import copy

        out = copy.copy(self)
        out._values = dict(self._values)
        out._values[key] = (value, citation, self._values[key][2] if key in self._values else "library")
        return out
