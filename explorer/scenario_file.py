"""Scenario files (TOML): read with the standard library, written by a small flat writer."""
from __future__ import annotations

import tomllib
from pathlib import Path

__all__ = ["load_scenario", "dump_scenario", "ScenarioFileError"]


class ScenarioFileError(ValueError):
    """A scenario file that cannot be read; the message names the file and the problem."""


def load_scenario(path: str | Path):
    """The `physics.scenario.Scenario` in a TOML file; ScenarioFileError names the file and the problem.

    The physics (numpy, scipy) is imported only once the file has been read, so a missing file is
    reported at once."""
    path = Path(path)
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise ScenarioFileError(f"{path}: no such scenario file") from None
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise ScenarioFileError(f"{path}: not valid TOML ({exc})") from None
    body = dict(data.get("scenario", {}))
    extra = sorted(set(data) - {"scenario"})
    if extra:
        raise ScenarioFileError(f"{path}: unknown table(s) {', '.join(extra)}; expected [scenario]")
    from physics.scenario import Scenario

    try:
        return Scenario.from_dict(body)
    except (TypeError, ValueError) as exc:
        raise ScenarioFileError(f"{path}: {exc}") from None


def _toml_value(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float)):
        return repr(float(value)) if isinstance(value, float) else str(value)
    text = str(value).replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n")
    return f'"{text}"'


def dump_scenario(scenario) -> str:
    """TOML text of a scenario (one [scenario] table)."""
    lines = ["[scenario]"]
    lines += [f"{key} = {_toml_value(value)}" for key, value in scenario.to_dict().items()]
    return "\n".join(lines) + "\n"
