"""Design margins: a policy that keeps operating points inside the ratings by a chosen margin.

Absolute ratings are the edge of destruction, not a design target: practice keeps the
junction well below its rating and the operating point well inside the derated SOA,
because curves are digitized by hand, parts spread, sensors lag and heatsinks age
(common practice, no source). A :class:`Policy` states those margins:

- ``tj_ceiling``: the junction temperature not to exceed, in place of tj_max, both for
  the constant-power lines of the SOA, P = (T_ceiling − Tc)/Rth (the definition of Rth,
  JEDEC JESD51-1), and for every junction-temperature check;
- ``power_fraction``: a further fraction of that power on the constant-power lines;
- ``current_fraction``: a fraction of the whole derated boundary's current at every voltage;
- ``voltage_fraction``: a fraction of v_max above which nothing is allowed.

Every key is optional: a missing key takes no margin on that quantity. The policy acts in
one place, the derated boundary (:func:`soacheck.derating.mechanism_factors` and
:func:`soacheck.boundary.allowed_current`) and the part's junction and voltage limits
(:attr:`soacheck.parts.Part.tj_limit_c`, :attr:`soacheck.parts.Part.v_limit_v`), so
every job judged through a part under a policy (:meth:`soacheck.parts.Part.under`) gets it.

No published high-reliability derating table is offered as a preset: none could be cited
here by document, table and clause with its numbers read from the text.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

from soacheck.errors import SoacheckError, did_you_mean
from soacheck.parts import REFERENCE_CASE_C


@dataclass(frozen=True)
class Policy:
    """Design margins to keep inside the absolute ratings.

    Attributes
    ----------
    name
        Shown in every result, table and plot legend.
    tj_ceiling_c
        Junction temperature not to exceed, in place of tj_max; None: tj_max. [°C]
    current_fraction
        Fraction of the derated boundary's current allowed at every voltage; None: 1. [1]
    voltage_fraction
        Fraction of v_max above which nothing is allowed; None: 1. [1]
    power_fraction
        Fraction of the allowed power kept on constant-power (thermal) lines; None: 1. [1]
    source
        Where the numbers come from: a file, or the note of a preset.
    """

    name: str
    tj_ceiling_c: float | None = None
    current_fraction: float | None = None
    voltage_fraction: float | None = None
    power_fraction: float | None = None
    source: str = ""

    @property
    def is_none(self) -> bool:
        """True when the policy takes no margin at all: absolute ratings."""
        return all(
            value is None
            for value in (self.tj_ceiling_c, self.current_fraction, self.voltage_fraction, self.power_fraction)
        )

    @property
    def current_factor(self) -> float:
        """The current fraction, 1 where the policy gives none. [1]"""
        return 1.0 if self.current_fraction is None else self.current_fraction

    @property
    def voltage_factor(self) -> float:
        """The voltage fraction, 1 where the policy gives none. [1]"""
        return 1.0 if self.voltage_fraction is None else self.voltage_fraction

    @property
    def power_factor(self) -> float:
        """The power fraction, 1 where the policy gives none. [1]"""
        return 1.0 if self.power_fraction is None else self.power_fraction

    def ceiling_c(self, tj_max_c: float) -> float:
        """The junction temperature not to exceed on a part rated ``tj_max_c``. [°C]"""
        return tj_max_c if self.tj_ceiling_c is None else self.tj_ceiling_c

    def check_for(self, tj_max_c: float, part_id: str) -> None:
        """Refuse a ceiling above the part's tj_max: a policy only ever takes margin away.

        Raises
        ------
        SoacheckError
            Naming the policy, the key and the accepted range.
        """
        if self.tj_ceiling_c is not None and self.tj_ceiling_c > tj_max_c:
            raise SoacheckError(
                f"policy '{self.name}': tj_ceiling is {self.tj_ceiling_c:g} °C, above {part_id}'s tj_max "
                f"{tj_max_c:g} °C; give a tj_ceiling from {REFERENCE_CASE_C:g} to {tj_max_c:g} °C"
            )

    def to_dict(self) -> dict[str, Any]:
        """The policy as JSON: every key, null where the policy takes no margin on it."""
        return {
            "name": self.name,
            "tj_ceiling": self.tj_ceiling_c,
            "current_fraction": self.current_fraction,
            "voltage_fraction": self.voltage_fraction,
            "power_fraction": self.power_fraction,
            "source": self.source,
        }

    def describe(self) -> str:
        """One line for a result's assumptions."""
        if self.is_none:
            return "no design-margin policy: judged against the absolute ratings (the edge of the ratings)"
        parts = []
        if self.tj_ceiling_c is not None:
            parts.append(f"junction ceiling {self.tj_ceiling_c:g} °C in place of tj_max")
        if self.power_fraction is not None:
            parts.append(f"{self.power_fraction:.0%} of the allowed power on constant-power lines")
        if self.current_fraction is not None:
            parts.append(f"{self.current_fraction:.0%} of the derated boundary's current")
        if self.voltage_fraction is not None:
            parts.append(f"nothing above {self.voltage_fraction:.0%} of v_max")
        source = f" ({self.source})" if self.source else ""
        return f"design-margin policy '{self.name}'{source}: " + "; ".join(parts)


NO_POLICY = Policy("none", source="absolute ratings")
"""``--policy none``: no margin beyond the derated absolute ratings."""

BENCH = Policy(
    "bench",
    tj_ceiling_c=125.0,  # common practice, no source
    current_fraction=0.8,  # common practice, no source
    voltage_fraction=0.8,  # common practice, no source
    power_fraction=0.9,  # common practice, no source
    source="common practice, no source",
)
"""``--policy bench``: a conservative preset for bench work (common practice, no source)."""

PRESETS: dict[str, Policy] = {"none": NO_POLICY, "bench": BENCH}
"""The presets ``--policy`` and a plan's ``policy`` key accept by name."""


def policy_lines(policy: dict[str, Any]) -> list[str]:
    """A policy's JSON object (:meth:`Policy.to_dict`) as lines a report shows."""
    if all(policy.get(key) is None for key in ("tj_ceiling", "current_fraction", "voltage_fraction", "power_fraction")):
        return [f"{policy.get('name', 'none')}: no design margin; judged against the absolute ratings"]
    lines = [f"{policy['name']} ({policy.get('source') or 'no source given'})"]
    if policy.get("tj_ceiling") is not None:
        lines.append(f"junction ceiling {policy['tj_ceiling']:g} °C, in place of tj_max")
    if policy.get("power_fraction") is not None:
        lines.append(f"{policy['power_fraction']:.0%} of the allowed power on constant-power lines")
    if policy.get("current_fraction") is not None:
        lines.append(f"{policy['current_fraction']:.0%} of the derated boundary's current")
    if policy.get("voltage_fraction") is not None:
        lines.append(f"nothing above {policy['voltage_fraction']:.0%} of v_max")
    lines.append("margin and verdict against this policy; margin_to_rating against the absolute ratings")
    return lines


def policy_of(part_policy: Policy | None) -> Policy:
    """The policy a result was judged under: :data:`NO_POLICY` for a part without one."""
    return NO_POLICY if part_policy is None else part_policy


def least_margin(margin: Any) -> float | None:
    """The least of an array of margins (−inf where nothing is allowed), None when nothing finite is left."""
    import numpy as np

    flat = np.ravel(np.asarray(margin, dtype=float))
    flat = flat[~np.isnan(flat)]
    if flat.size == 0:
        return None
    worst = float(flat.min())
    return worst if np.isfinite(worst) else None


def policy_from_table(table: Any, where: str, *, default_name: str) -> Policy:
    """Validate a policy table (a policy file or a ``[policy]`` table) into a :class:`Policy`.

    Parameters
    ----------
    table
        The parsed TOML table.
    where
        Where it came from, for messages: ``bench.toml`` or ``plan.toml [policy]``.
    default_name
        The name when the table gives none (the file's stem).

    Raises
    ------
    SoacheckError
        An unknown key (with the nearest key), a fraction outside (0, 1], a ceiling below
        25 °C or above 1000 °C, or a name that is not text; each names the key and range
        (the schema :class:`~soacheck.tomlschemas.PolicyTable`).
    """
    from soacheck.tomlschemas import PolicyTable, validate  # pydantic: only when a policy is read

    checked = validate(PolicyTable, table, where)
    name = (checked.name or default_name).strip()
    return Policy(
        name,
        checked.tj_ceiling,
        checked.current_fraction,
        checked.voltage_fraction,
        checked.power_fraction,
        source=where,
    )


def policy_from_value(value: Any, where: str, *, base: Path) -> Policy:
    """A file's ``policy`` key: an inline table, or a preset name or policy file (relative to ``base``).

    Raises
    ------
    SoacheckError
        Anything else, or a bad table or file (naming ``where`` and the key).
    """
    if isinstance(value, dict):
        return policy_from_table(value, where, default_name="custom")
    if isinstance(value, str) and value.strip():
        text = value.strip()
        if text.lower() in PRESETS:
            return PRESETS[text.lower()]
        return resolve_policy(base / text, where=where)
    raise SoacheckError(
        f"{where} is {value!r}; write a preset name ({', '.join(PRESETS)}), a policy file in quotes, or a table"
    )


def read_policy(path: str | Path) -> Policy:
    """Read a policy file: the keys at the top level, or in a ``[policy]`` table.

    Raises
    ------
    SoacheckError
        A missing file, invalid TOML, or a bad key or value (see :func:`policy_from_table`).
    """
    from soacheck.tomlfiles import read_toml  # file reading stays at the edge

    path = Path(path)
    table = read_toml(path, "policy")
    if set(table) == {"policy"} and isinstance(table["policy"], dict):
        return policy_from_table(table["policy"], f"{path} [policy]", default_name=path.stem)
    return policy_from_table(table, str(path), default_name=path.stem)


def resolve_policy(ref: str | Path | Policy | None, *, where: str = "--policy") -> Policy:
    """A policy from a preset name (``none``, ``bench``, any letter case), a file, or a Policy.

    None gives :data:`NO_POLICY`. A name that is neither a preset nor an existing file is
    refused, naming the presets.
    """
    if ref is None:
        return NO_POLICY
    if isinstance(ref, Policy):
        return ref
    text = str(ref).strip()
    if text.lower() in PRESETS:
        return PRESETS[text.lower()]
    path = Path(text)
    if path.suffix.lower() == ".toml" or path.exists():
        return read_policy(path)
    raise SoacheckError(
        f"{where}: '{text}' is neither a preset ({', '.join(PRESETS)}){did_you_mean(text.lower(), PRESETS)} "
        "nor a policy file (.toml)"
    )
