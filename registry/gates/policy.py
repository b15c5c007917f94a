"""Promotion policies: a model's ladder of stages, the gates guarding each, how it is climbed.

A policy is TOML (format in docs/policy.md). A model's policy may be complete or lay a few
changes over the catalogue-wide default (`base=`); validation is strict and names the dotted
place at fault, e.g. `stages.live.gates.no-regression.margin`.
"""

from __future__ import annotations

import copy
import dataclasses
import re
import tomllib
from collections.abc import Iterable, Mapping
from importlib import resources
from typing import Any

from registry.errors import NotFound, UserError
from registry.gates.serving_settings import ServingSettings, serving_settings
from registry.gates.settings import GATE_SETTINGS, GATES, validate_setting
from registry.suggest import did_you_mean

RETIRED = "retired"  # outside the ladder: a version taken out of service
STAGE_NAME = re.compile(r"^[a-z][a-z0-9]*(-[a-z0-9]+)*$")
TOP_LEVEL_KEYS = ("description", "ladder", "stages", "serving")
STAGE_KEYS = ("exclusive", "skippable", "gates")


class PolicyError(UserError):
    """A policy file that cannot be used; `place` is the dotted key at fault."""

    def __init__(self, message: str, *, place: str | None, source: str) -> None:
        super().__init__(f"{message} (policy {source})", place=place)
        self.source = source


class UnknownStage(NotFound):
    """A stage the model's policy does not know."""


class TransitionError(UserError):
    """A move the policy forbids: skipping a stage that may not be skipped, re-entering a stage."""


@dataclasses.dataclass(frozen=True)
class GateSpec:
    """One gate guarding a stage, with its settings completed from the defaults."""

    gate: str
    settings: Mapping[str, Any]


@dataclasses.dataclass(frozen=True)
class StageRule:
    """How one stage is guarded: exclusive (held by one version at most), skippable (a version may
    climb past it without entering it), and its gates in the order they are reported."""

    name: str
    is_exclusive: bool
    is_skippable: bool
    gates: tuple[GateSpec, ...]


@dataclasses.dataclass(frozen=True)
class Policy:
    """A validated policy. `ladder` lists the stages in climbing order; `stages` also holds
    `retired`, which is outside the ladder."""

    source: str
    description: str
    ladder: tuple[str, ...]
    stages: Mapping[str, StageRule]
    serving: ServingSettings = ServingSettings()  # evidence after release ([serving])

    @property
    def exclusive_stages(self) -> tuple[str, ...]:
        return tuple(name for name in self.ladder if self.stages[name].is_exclusive)

    @property
    def top_stage(self) -> str:
        """The stage whose holder writes the feed."""
        return self.ladder[-1]

    def stage(self, name: str) -> StageRule:
        """The rule of one stage; an unknown name is a user error."""
        try:
            return self.stages[name]
        except KeyError:
            known = ", ".join((*self.ladder, RETIRED))
            raise UnknownStage(f"unknown stage {name!r}"
                               f"{did_you_mean(name, (*self.ladder, RETIRED))} "
                               f"(this model's stages are {known})",
                               place=f"stage {name}") from None

    def is_exclusive(self, stage: str) -> bool:
        """Whether at most one version may hold `stage` at a time."""
        return self.stage(stage).is_exclusive

    def gates_for(self, stage: str) -> tuple[GateSpec, ...]:
        """The gates guarding entry into `stage`, in report order."""
        return self.stage(stage).gates

    def next_stage(self, current_stages: Iterable[str]) -> str | None:
        """The stage above the highest ladder stage held; the first rung when none is held
        (a retired version starts again at the bottom); None at the top."""
        position = self._position(current_stages)
        following = position + 1
        return self.ladder[following] if following < len(self.ladder) else None

    def check_transition(self, from_stages: Iterable[str], to_stage: str) -> tuple[str, ...]:
        """Allow a move from the stages a version holds into `to_stage`, or raise a user error.

        Climbing may pass over skippable stages only; going down the ladder or into `retired` is
        always allowed (its gates still apply). Returns the stages skipped on the way up.
        """
        held = tuple(from_stages)
        target = self.stage(to_stage).name
        position = self._position(held)
        if target in held:
            raise TransitionError(f"the version already holds stage {target!r}",
                                  place=f"stage {target}")
        if target == RETIRED:
            return ()
        index = self.ladder.index(target)
        skipped = self.ladder[position + 1:index]
        for name in skipped:
            if not self.stages[name].is_skippable:
                start = self.ladder[position] if position >= 0 else "no stage"
                raise TransitionError(
                    f"moving from {start} to {target} would skip {name}, which this policy "
                    f"does not allow to be skipped; promote to {name} first",
                    place=f"stages.{name}")
        return skipped

    def _position(self, held: Iterable[str]) -> int:
        """Index of the highest ladder stage held, -1 for none."""
        position = -1
        for name in held:
            self.stage(name)
            if name != RETIRED:
                position = max(position, self.ladder.index(name))
        return position

    @property
    def serving_stages(self) -> tuple[str, ...]:
        """The stages whose holders serve: every rung above the first."""
        return self.ladder[1:]

    def to_dict(self) -> dict[str, Any]:
        """The policy as a document of the same shape as its TOML, every setting spelled out."""
        return {
            "description": self.description,
            "ladder": list(self.ladder),
            "serving": self.serving.to_dict(),
            "stages": {
                name: {
                    **({} if name == RETIRED else {"exclusive": rule.is_exclusive,
                                                    "skippable": rule.is_skippable}),
                    "gates": {spec.gate: dict(spec.settings) for spec in rule.gates},
                }
                for name, rule in self.stages.items()
            },
        }


def default_policy_text() -> str:
    """The catalogue-wide default policy shipped with Lockkeeper."""
    return resources.files("registry.gates").joinpath("default_policy.toml").read_text("utf-8")


def default_policy() -> Policy:
    return load_policy(default_policy_text(), source="default")


def load_policy(text: str, *, source: str, base: Policy | None = None) -> Policy:
    """Parse and validate a policy. With `base`, the text lays changes over it: stage tables and
    gate settings merge key by key, `ladder` replaces, and `<gate> = false` drops a gate."""
    try:
        document = tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        raise PolicyError(f"not valid TOML: {error}", place=None, source=source) from None
    except RecursionError:  # tomllib recurses once per nested array or inline table
        raise PolicyError("not valid TOML: values nest too deeply", place=None,
                          source=source) from None
    if base is not None:
        underlay = base.to_dict()
        if "ladder" in document:
            # A new ladder drops the base's rules for stages it leaves out.
            kept = set(document["ladder"]) if isinstance(document["ladder"], list) else set()
            underlay["stages"] = {name: rule for name, rule in underlay["stages"].items()
                                  if name in kept or name == RETIRED}
        document = _overlay(underlay, document)
    return _validate(document, source)


def _overlay(base: dict[str, Any], change: Mapping[str, Any]) -> dict[str, Any]:
    merged = copy.deepcopy(base)
    for key, value in change.items():
        if isinstance(value, Mapping) and isinstance(merged.get(key), Mapping):
            merged[key] = _overlay(merged[key], value)
        elif value is True and isinstance(merged.get(key), Mapping):
            continue  # `gate = true` keeps the base's settings of a gate already present
        else:
            merged[key] = copy.deepcopy(value)
    return merged


def _validate(document: Mapping[str, Any], source: str) -> Policy:
    def fail(message: str, place: str | None) -> PolicyError:
        return PolicyError(message, place=place, source=source)

    for key in document:
        if key not in TOP_LEVEL_KEYS:
            raise fail(f"unknown key {key!r}; a policy has {', '.join(TOP_LEVEL_KEYS)}", key)
    description = document.get("description", "")
    if not isinstance(description, str):
        raise fail("must be a string", "description")
    ladder = document.get("ladder")
    if not isinstance(ladder, list) or not ladder:
        raise fail("the ladder must be a non-empty list of stage names", "ladder")
    seen: set[str] = set()
    for i, name in enumerate(ladder):
        place = f"ladder[{i}]"
        if not isinstance(name, str) or not STAGE_NAME.match(name):
            raise fail(f"stage names are lower-case words joined by hyphens, not {name!r}", place)
        if name == RETIRED:
            raise fail("retired is outside the ladder; leave it out", place)
        if name in seen:
            raise fail(f"duplicate stage {name!r}", place)
        seen.add(name)

    tables = document.get("stages", {})
    if not isinstance(tables, Mapping):
        raise fail("must be a table of stages", "stages")
    for name in tables:
        if name not in seen and name != RETIRED:
            raise fail(f"unknown stage {name!r}; the ladder is {', '.join(ladder)} "
                       f"(plus {RETIRED})", f"stages.{name}")

    stages = {name: _stage(name, tables.get(name, {}), fail) for name in (*ladder, RETIRED)}
    serving = serving_settings(document.get("serving", {}), fail)
    return Policy(source=source, description=description, ladder=tuple(ladder), stages=stages,
                  serving=serving)


def _stage(name: str, table: Any, fail) -> StageRule:
    place = f"stages.{name}"
    if not isinstance(table, Mapping):
        raise fail("a stage is a table", place)
    allowed = ("gates",) if name == RETIRED else STAGE_KEYS
    for key in table:
        if key not in allowed:
            raise fail(f"unknown key {key!r}; a stage has {', '.join(allowed)}", f"{place}.{key}")
    flags = {}
    for key in ("exclusive", "skippable"):
        value = table.get(key, False)
        if not isinstance(value, bool):
            raise fail("must be true or false", f"{place}.{key}")
        flags[key] = value
    gates = table.get("gates", {})
    if not isinstance(gates, Mapping):
        raise fail("must be a table of gates", f"{place}.gates")
    specs = []
    for gate, settings in gates.items():
        gate_place = f"{place}.gates.{gate}"
        if gate not in GATE_SETTINGS:
            raise fail(f"unknown gate {gate!r}{did_you_mean(gate, GATES)} "
                       f"(the gates are {', '.join(GATES)})", gate_place)
        if settings is False:
            continue
        if settings is True:
            settings = {}
        if not isinstance(settings, Mapping):
            raise fail("a gate is a table of settings, or true / false", gate_place)
        specs.append(GateSpec(gate, _settings(gate, settings, gate_place, fail)))
    return StageRule(name=name, is_exclusive=flags["exclusive"], is_skippable=flags["skippable"],
                     gates=tuple(specs))


def _settings(gate: str, given: Mapping[str, Any], place: str, fail) -> dict[str, Any]:
    known = GATE_SETTINGS[gate]
    settled = {}
    for key, value in given.items():
        if key not in known:
            has = f"its settings are {', '.join(known)}" if known else "it has no settings"
            raise fail(f"unknown setting {key!r} of gate {gate}; {has}", f"{place}.{key}")
        settled[key], complaint = validate_setting(known[key], value)
        if complaint:
            raise fail(f"{key} {complaint}, not {value!r}", f"{place}.{key}")
    for key, setting in known.items():
        settled.setdefault(key, copy.deepcopy(setting.default))
    return settled
