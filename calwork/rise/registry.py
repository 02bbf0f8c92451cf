"""The registry of temperature-rise methods (light: importing it loads no numerical code).

Each method is a frozen :class:`RiseMethod` record; :data:`METHODS` maps its name to it and
cannot be changed at run time. The engine (:func:`calwork.rise.corrected_rise`), the command
line (``--method`` choices), the run-sheet and lab-book validation, the method validation on
simulated runs and the tests all iterate over this one mapping. DEVELOPERS.md shows how to add
a method.

A method's numerical functions are named as ``"module:function"`` and imported when first
used, so that building the command line's help does not load numpy and scipy.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from importlib import import_module
from types import MappingProxyType
from typing import Any

__all__ = ["DICKINSON_RULES", "METHODS", "RiseMethod", "rise_method"]

#: The ``t_x`` rules of the Dickinson method (option ``dickinson_rule``; the first is the
#: default): the exact equal-area time (docs/methods.md (1.7)) or the 60 % time of the fuel
#: standards' manual procedure ((1.8)).
DICKINSON_RULES = ("equal-area", "60-percent")


def _resolve(path: str) -> Callable[..., Any]:
    module, _, name = path.partition(":")
    return getattr(import_module(module), name)


@dataclass(frozen=True, kw_only=True)
class RiseMethod:
    """One temperature-rise method.

    Attributes
    ----------
    name
        The name users give (``--method``, the sheet, the API).
    title
        The name in sentences and reports (``'Regnault–Pfaundler'``).
    summary
        One line for help texts and reports.
    reducer
        ``"module:function"``: ``function(selection, **options) -> MethodOutput`` computes the
        rise, its fit uncertainty components and the drift model from the selected periods.
    rerun
        ``"module:function"`` or ``None``: ``function(selection, previous) -> float`` gives the
        rise for slightly moved boundaries, starting from the previous output (a warm start);
        ``None`` means the reducer is simply run again.
    options
        Option name → allowed values (the first is the default).
    cross_checks
        Methods whose rise is computed alongside as a check (a warning when they disagree
        beyond the combined uncertainty).
    check
        ``"module:function"`` or ``None``: ``function(selection) -> (rise, u)``, this method's
        rise and standard uncertainty when another method uses it as a cross-check.
    manual_procedures
        The standards' manual forms of this method (:mod:`calwork.rise.manual`), worked step
        by step with their own period and rounding rules.
    warm_start
        The reducer accepts ``start=`` (the model of a previous output for nearly the same
        periods) and converges from there — for a refit after a boundary moved.
    """

    name: str
    title: str
    summary: str
    reducer: str
    rerun: str | None = None
    options: Mapping[str, tuple[str, ...]] = field(default_factory=dict)
    cross_checks: tuple[str, ...] = ()
    check: str | None = None
    manual_procedures: tuple[str, ...] = ()
    warm_start: bool = False

    def __post_init__(self) -> None:
        object.__setattr__(self, "options", MappingProxyType(dict(self.options)))

    def reduce_function(self, **options: str) -> Callable[..., Any]:
        """``(selection, previous=None) -> MethodOutput`` with the given options (unknown ones
        are refused); a ``previous`` output warm-starts a method that can use it."""
        unknown = set(options) - set(self.options)
        if unknown:
            raise TypeError(f"method {self.name!r} takes no option {sorted(unknown)}")
        function = _resolve(self.reducer)
        if self.warm_start:
            return lambda selection, previous=None: function(
                selection, **options,
                **({} if previous is None else {"start": previous.model}))
        return lambda selection, previous=None: function(selection, **options)

    def rerun_function(self, **options: str) -> Callable[[Any, Any], float]:
        """``(selection, previous MethodOutput) -> rise`` for moved boundaries."""
        if self.rerun is None:
            reduce = self.reduce_function(**options)
            return lambda selection, _previous: reduce(selection).rise_K
        return _resolve(self.rerun)

    def check_function(self) -> Callable[[Any], tuple[float, float]]:
        """``selection -> (rise, u)`` of this method as a cross-check of another."""
        if self.check is None:
            raise TypeError(f"method {self.name!r} has no cross-check function")
        return _resolve(self.check)

    def label(self, **options: str) -> str:
        """The method as provenance and reports name it, e.g. ``'dickinson (60-percent)'``."""
        chosen = [str(options[k]) for k in self.options if k in options]
        return f"{self.name} ({', '.join(chosen)})" if chosen else self.name


#: The registered methods, by name (read-only).
METHODS: Mapping[str, RiseMethod] = MappingProxyType({m.name: m for m in (
    RiseMethod(
        name="newton-fit",
        title="newton-fit",
        summary="joint Newtonian fit of the fore and after periods (default)",
        reducer="calwork.rise.methods:reduce_newton",
        rerun="calwork.rise.methods:newton_rise_only",
        cross_checks=("regnault-pfaundler",),
        warm_start=True,
    ),
    RiseMethod(
        name="regnault-pfaundler",
        title="Regnault–Pfaundler",
        summary="Regnault–Pfaundler: drift linear in temperature, integrated over the readings",
        reducer="calwork.rise.methods:reduce_regnault_pfaundler",
        check="calwork.rise.methods:regnault_pfaundler_check",
        manual_procedures=("iso-1928",),
    ),
    RiseMethod(
        name="dickinson",
        title="Dickinson",
        summary="Dickinson: drift lines extrapolated to the time t_x",
        reducer="calwork.rise.methods:reduce_dickinson",
        options={"dickinson_rule": DICKINSON_RULES},
        manual_procedures=("astm-60-percent",),
    ),
)})


def rise_method(name: str) -> RiseMethod:
    """The registered method ``name``; a :class:`~calwork.core.errors.ChoiceError` naming the
    registered ones otherwise."""
    from calwork.core.errors import check_choice

    check_choice("method", name, METHODS)
    return METHODS[name]
