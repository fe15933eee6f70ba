"""Planner inputs: plain frozen dataclasses the shift planner reads.

Everything the planner needs is in one :class:`PlanInputs` object: the ovens,
the tunnels (with their belt loading options), the products, the shifts, the
orders, the dwell table (one pandas DataFrame, columns as agreed in the
interface contract) and the objective. The adapter in ``optimizer.planning.adapter``
builds it from a validated scenario; tests build it by hand.

Units used by the planner (not SI seconds: shift planning is done in the
units the plant uses): minutes [min], kilograms [kg], metres [m], belt speed
[m/min], energy [kJ/kg]. All names are plain string keys; the dwell table's
``oven``, ``oven_setting``, ``tunnel``, ``tunnel_setting``, ``loading`` and
``product`` columns must use the same keys.

Every check raises :class:`PlanInputError` (a ``ValueError``) with a one-line
message that names the field and what is accepted.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from enum import Enum
from types import MappingProxyType

import pandas as pd

DWELL_COLUMNS: tuple[str, ...] = (
    "product",
    "oven",
    "oven_setting",
    "tunnel",
    "tunnel_setting",
    "loading",
    "cook_min",
    "heat_in_kj_per_kg",
    "chill_min",
    "heat_out_kj_per_kg",
    "max_belt_speed_m_per_min",
    "feasible",
    "reason",
)
"""Dwell-table columns the planner reads (the table may carry more)."""


class PlanInputError(ValueError):
    """A planner input is outside the accepted domain."""


def _text(where: str, name: str, value: object) -> str:
    if not isinstance(value, str) or not value.strip():
        raise PlanInputError(f"{where}.{name}: must be a non-empty string, got {value!r}")
    return value


def _number(
    where: str,
    name: str,
    value: object,
    *,
    low: float = 0.0,
    strict: bool = False,
    allow_inf: bool = False,
) -> float:
    try:
        x = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise PlanInputError(f"{where}.{name}: must be a number, got {value!r}") from None
    if math.isnan(x) or (math.isinf(x) and not allow_inf):
        raise PlanInputError(f"{where}.{name}: must be a finite number, got {value!r}")
    if (strict and x <= low) or (not strict and x < low):
        rel = ">" if strict else ">="
        raise PlanInputError(f"{where}.{name}: must be {rel} {low:g}, got {value!r}")
    return x


def _keys(where: str, name: str, values: tuple[str, ...]) -> None:
    if len(values) == 0:
        raise PlanInputError(f"{where}.{name}: needs at least one entry")
    for v in values:
        _text(where, name, v)
    if len(set(values)) != len(values):
        raise PlanInputError(f"{where}.{name}: entries must be unique, got {list(values)}")


class Objective(Enum):
    """What the plan optimises.

    ``MOST_KG``
        Most kilograms through the tunnels over the horizon.
    ``MOST_VALUE``
        Most value (``ProductData.value_per_kg`` times kg).
    ``SOONEST``
        Finish the orders soonest: minimise the sum over orders of
        ``OrderData.weight`` times the number of shifts before the order's
        minimum is complete (all minimums must be met by their due shifts).
    ``LEAST_ENERGY``
        Least oven heat in plus tunnel heat out [kJ] for a fixed output
        (``PlanInputs.fixed_output_kg``, or the order minimums when that is
        ``None``).
    """

    MOST_KG = "most_kg"
    MOST_VALUE = "most_value"
    SOONEST = "soonest"
    LEAST_ENERGY = "least_energy"


@dataclass(frozen=True)
class OvenData:
    """A batch oven.

    Parameters
    ----------
    name : str
        Oven key (as in the dwell table ``oven`` column).
    trays : int
        Tray (or rack) positions per batch [-].
    capacity_kg : float
        Most product per batch [kg].
    settings : tuple of str
        Air-setting keys this oven can run (dwell table ``oven_setting``).
    load_unload_min : float
        Minutes to load plus unload one batch [min].
    changeover_min : float
        Minutes to change from one air setting to another [min]. The first
        setting of a shift is free: it is set in the time already taken off
        the shift.
    unload_min : float
        Of ``load_unload_min``, the minutes of unloading [min]; the timed
        schedule loads for ``load_unload_min - unload_min`` before the cook
        and unloads for ``unload_min`` after it.
    """

    name: str
    trays: int
    capacity_kg: float
    settings: tuple[str, ...]
    load_unload_min: float = 0.0
    changeover_min: float = 0.0
    unload_min: float = 0.0

    def __post_init__(self) -> None:
        w = f"oven {self.name!r}"
        _text("oven", "name", self.name)
        if isinstance(self.trays, bool) or not isinstance(self.trays, int) or self.trays < 1:
            raise PlanInputError(f"{w}.trays: must be an integer >= 1, got {self.trays!r}")
        _number(w, "capacity_kg", self.capacity_kg, strict=True)
        object.__setattr__(self, "settings", tuple(self.settings))
        _keys(w, "settings", self.settings)
        both = _number(w, "load_unload_min", self.load_unload_min)
        _number(w, "changeover_min", self.changeover_min)
        if _number(w, "unload_min", self.unload_min) > both:
            raise PlanInputError(
                f"{w}.unload_min: must be <= load_unload_min ({both:g}), got {self.unload_min!r}"
            )


@dataclass(frozen=True)
class LoadingOption:
    """A way of loading the tunnel belt.

    Parameters
    ----------
    name : str
        Loading key (dwell table ``loading``).
    coverage : float
        Fraction of the belt area covered with product, in (0, 1] [-].
    """

    name: str
    coverage: float

    def __post_init__(self) -> None:
        _text("loading", "name", self.name)
        c = _number(f"loading {self.name!r}", "coverage", self.coverage, strict=True)
        if c > 1.0:
            raise PlanInputError(
                f"loading {self.name!r}.coverage: must be in (0, 1], got {self.coverage!r}"
            )


@dataclass(frozen=True)
class TunnelData:
    """A continuous cooling (chill or freeze) tunnel.

    Parameters
    ----------
    name : str
        Tunnel key (dwell table ``tunnel``).
    length_m : float
        Belt length in the cold zone [m].
    width_m : float
        Usable belt width [m].
    min_speed_m_per_min, max_speed_m_per_min : float
        Belt speed range [m/min].
    settings : tuple of str
        Air-setting keys (dwell table ``tunnel_setting``).
    loadings : tuple of LoadingOption
        Belt loading options (dwell table ``loading``).
    changeover_min : float
        Minutes lost when the tunnel switches to another run, a run being
        one product at one tunnel setting (changing the loading inside a run
        is free) [min]. The first run of a shift is free: the tunnel is set
        up in the time already taken off the shift.
    transfer_min : float
        Shortest wait between oven unload and belt entry (the transfer) [min].
    hot_hold_min : float
        The tunnel's own longest wait between oven unload and belt entry
        [min]; ``inf`` for none. The dwell table's chill cells hold for any
        wait from ``transfer_min`` to this limit (they are checked at both).
    """

    name: str
    length_m: float
    width_m: float
    min_speed_m_per_min: float
    max_speed_m_per_min: float
    settings: tuple[str, ...]
    loadings: tuple[LoadingOption, ...]
    changeover_min: float = 0.0
    transfer_min: float = 0.0
    hot_hold_min: float = math.inf

    def __post_init__(self) -> None:
        w = f"tunnel {self.name!r}"
        _text("tunnel", "name", self.name)
        _number(w, "length_m", self.length_m, strict=True)
        _number(w, "width_m", self.width_m, strict=True)
        lo = _number(w, "min_speed_m_per_min", self.min_speed_m_per_min)
        hi = _number(w, "max_speed_m_per_min", self.max_speed_m_per_min, strict=True)
        if hi < lo:
            raise PlanInputError(
                f"{w}.max_speed_m_per_min: must be >= min_speed_m_per_min ({lo:g}), got {hi:g}"
            )
        object.__setattr__(self, "settings", tuple(self.settings))
        _keys(w, "settings", self.settings)
        object.__setattr__(self, "loadings", tuple(self.loadings))
        if not self.loadings or not all(isinstance(x, LoadingOption) for x in self.loadings):
            raise PlanInputError(f"{w}.loadings: needs at least one LoadingOption")
        _keys(w, "loadings", tuple(x.name for x in self.loadings))
        _number(w, "changeover_min", self.changeover_min)
        tr = _number(w, "transfer_min", self.transfer_min)
        if _number(w, "hot_hold_min", self.hot_hold_min, strict=True, allow_inf=True) < tr:
            raise PlanInputError(
                f"{w}.hot_hold_min: must be >= transfer_min ({tr:g}), got {self.hot_hold_min!r}"
            )

    def coverage(self, loading: str) -> float:
        """Belt coverage of loading option ``loading`` [-]."""
        for x in self.loadings:
            if x.name == loading:
                return x.coverage
        raise PlanInputError(
            f"tunnel {self.name!r}: unknown loading {loading!r}; "
            f"known: {[x.name for x in self.loadings]}"
        )


@dataclass(frozen=True)
class ProductData:
    """A product as the planner sees it.

    Parameters
    ----------
    name : str
        Product key (dwell table ``product``).
    kg_per_tray : float
        Product on one oven tray [kg].
    belt_kg_per_m2 : float
        Product per square metre of belt at full coverage [kg/m2]; the
        tunnel's throughput is this times coverage times width times speed.
    value_per_kg : float
        Value per kilogram for the MOST_VALUE objective [currency/kg].
    hot_hold_min : float
        Longest a cooked batch may wait between oven unload and the belt
        [min]; ``inf`` for no limit.
    """

    name: str
    kg_per_tray: float
    belt_kg_per_m2: float
    value_per_kg: float = 1.0
    hot_hold_min: float = math.inf

    def __post_init__(self) -> None:
        w = f"product {self.name!r}"
        _text("product", "name", self.name)
        _number(w, "kg_per_tray", self.kg_per_tray, strict=True)
        _number(w, "belt_kg_per_m2", self.belt_kg_per_m2, strict=True)
        _number(w, "value_per_kg", self.value_per_kg)
        _number(w, "hot_hold_min", self.hot_hold_min, strict=True, allow_inf=True)


@dataclass(frozen=True)
class StopData:
    """A planned stop (cleaning, maintenance) of one machine or of every machine.

    Parameters
    ----------
    minutes : float
        Length of the stop [min].
    machine : str or None
        Oven or tunnel key; ``None`` for every machine.
    reason : str
        Text for the schedule.
    start : float or None
        Start from the start of the shift [min]; ``None`` lets the schedule
        place it.
    """

    minutes: float
    machine: str | None = None
    reason: str = ""
    start: float | None = None

    def __post_init__(self) -> None:
        w = "stop" if self.machine is None else f"stop of {self.machine!r}"
        _number(w, "minutes", self.minutes)
        if self.machine is not None:
            _text("stop", "machine", self.machine)
        if not isinstance(self.reason, str):
            raise PlanInputError(f"{w}.reason: must be a string, got {self.reason!r}")
        if self.start is not None:
            _number(w, "start", self.start)

    def applies_to(self, machine: str) -> bool:
        """True when the stop stops ``machine``."""
        return self.machine is None or self.machine == machine


@dataclass(frozen=True)
class ShiftData:
    """A shift of the planning horizon.

    Parameters
    ----------
    name : str
        Shift key; shifts run in the order given in ``PlanInputs.shifts``.
    minutes : float
        Available minutes per machine in this shift, cleaning and planned
        stops already taken off [min].
    machine_minutes : mapping of str to float
        Per-machine override of ``minutes`` (oven or tunnel name -> minutes)
        for planned stops of one machine [min].
    stops : tuple of StopData
        The planned stops already taken off the minutes, for the timed
        schedule to place; a machine's clock span in the shift is its
        available minutes plus its stops (:meth:`window`).
    """

    name: str
    minutes: float
    machine_minutes: Mapping[str, float] = field(default_factory=dict)
    stops: tuple[StopData, ...] = ()

    def __post_init__(self) -> None:
        w = f"shift {self.name!r}"
        _text("shift", "name", self.name)
        _number(w, "minutes", self.minutes)
        mm = {}
        for k, v in dict(self.machine_minutes).items():
            _text(w, "machine_minutes key", k)
            mm[k] = _number(w, f"machine_minutes[{k!r}]", v)
        object.__setattr__(self, "machine_minutes", MappingProxyType(mm))
        object.__setattr__(self, "stops", tuple(self.stops))
        if not all(isinstance(x, StopData) for x in self.stops):
            raise PlanInputError(f"{w}.stops: entries must be StopData")

    def available(self, machine: str) -> float:
        """Available minutes of ``machine`` in this shift [min]."""
        return float(self.machine_minutes.get(machine, self.minutes))

    def stops_of(self, machine: str) -> tuple[StopData, ...]:
        """The stops of ``machine`` in this shift, in the order given."""
        return tuple(x for x in self.stops if x.applies_to(machine))

    def window(self, machine: str) -> float:
        """Clock span of ``machine`` in this shift: available minutes plus its stops [min]."""
        return self.available(machine) + sum(x.minutes for x in self.stops_of(machine))


@dataclass(frozen=True)
class OrderData:
    """An order (demand) for one product.

    Parameters
    ----------
    product : str
        Product key.
    min_kg : float
        Least that must be made by the end of ``due_shift`` [kg].
    max_kg : float
        Most of this order that may be made over the horizon [kg]; ``inf``
        for "as much as fits". A product's total over the horizon is capped
        by the sum of its orders' ``max_kg``.
    due_shift : str or None
        Shift key by whose end ``min_kg`` must be made; ``None`` = the last
        shift. Minimums of several orders of one product are cumulative.
    weight : float
        Weight of the order in the SOONEST objective [-].
    name : str or None
        Label used in reports; defaults to the product key.
    """

    product: str
    min_kg: float = 0.0
    max_kg: float = math.inf
    due_shift: str | None = None
    weight: float = 1.0
    name: str | None = None

    def __post_init__(self) -> None:
        _text("order", "product", self.product)
        w = f"order for {self.product!r}"
        lo = _number(w, "min_kg", self.min_kg)
        hi = _number(w, "max_kg", self.max_kg, allow_inf=True)
        if hi < lo:
            raise PlanInputError(f"{w}.max_kg: must be >= min_kg ({lo:g}), got {hi:g}")
        if self.due_shift is not None:
            _text(w, "due_shift", self.due_shift)
        _number(w, "weight", self.weight)
        if self.name is not None:
            _text(w, "name", self.name)

    @property
    def label(self) -> str:
        """Name used in reports."""
        return self.name if self.name is not None else self.product


@dataclass(frozen=True)
class SolveOptions:
    """How to build and solve the plan.

    Parameters
    ----------
    solver : str
        ``"highs"`` (in-process through highspy, default) or ``"cbc"``.
    fallback : bool
        Try the other solver when the first one errors or finds nothing.
    time_limit_s : float
        Wall-clock limit per MILP solve [s].
    gap_rel : float
        Relative MIP gap at which the solver may stop [-].
    threads : int
        Solver threads (CBC is always run with one thread).
    mix_tolerance : float
        Products may share a mixed batch when the longer cook time is at
        most ``(1 + mix_tolerance)`` times the shorter [-].
    max_mix_products : int
        Most products in one mixed batch, 1 (no mixing) or 2.
    column_generation : bool or None
        Generate mixed loads from LP duals instead of enumerating them all;
        ``None`` = automatic (when the enumerated pool is larger than
        ``max_enumerated_loads``).
    max_enumerated_loads : int
        Pool size above which column generation is used automatically. With
        the belt's fill and drain in the model the demo's pool of 254 mixed
        loads, enumerated, left HiGHS at a 20 % gap after 60 s, where column
        generation solved it to optimality in 9 s: hence 200, not 500.
    formulation : str
        ``"compact"`` (default: integer batches per load and shift, exact)
        or ``"patterns"`` (one choice of oven-shift pattern per oven and
        shift, patterns generated from LP duals by knapsack pricing, then
        the MILP over the generated patterns only - a heuristic: on the
        benchmark plants it found worse plans than ``"compact"``; its bound
        is the pattern LP's).
    shadow_prices : bool
        Compute shadow prices of machine time after the MILP.
    diagnose : bool
        Run the elastic re-solve that names shortfalls when nothing fits.
    msg : bool
        Let the solver print its log.
    """

    solver: str = "highs"
    fallback: bool = True
    time_limit_s: float = 60.0
    gap_rel: float = 1e-4
    threads: int = 1
    mix_tolerance: float = 0.15
    max_mix_products: int = 2
    column_generation: bool | None = None
    max_enumerated_loads: int = 200
    formulation: str = "compact"
    shadow_prices: bool = True
    diagnose: bool = True
    msg: bool = False

    def __post_init__(self) -> None:
        if self.solver not in ("highs", "cbc"):
            raise PlanInputError(f"options.solver: must be 'highs' or 'cbc', got {self.solver!r}")
        _number("options", "time_limit_s", self.time_limit_s, strict=True)
        _number("options", "gap_rel", self.gap_rel)
        if not isinstance(self.threads, int) or self.threads < 1:
            raise PlanInputError(f"options.threads: must be an integer >= 1, got {self.threads!r}")
        _number("options", "mix_tolerance", self.mix_tolerance)
        if self.max_mix_products not in (1, 2):
            raise PlanInputError(
                f"options.max_mix_products: must be 1 or 2, got {self.max_mix_products!r}"
            )
        if self.formulation not in ("compact", "patterns"):
            raise PlanInputError(
                f"options.formulation: must be 'compact' or 'patterns', got {self.formulation!r}"
            )
        if not isinstance(self.max_enumerated_loads, int) or self.max_enumerated_loads < 0:
            raise PlanInputError(
                "options.max_enumerated_loads: must be an integer >= 0, "
                f"got {self.max_enumerated_loads!r}"
            )


@dataclass(frozen=True)
class PlanInputs:
    """Everything the planner needs.

    Parameters
    ----------
    ovens, tunnels, products, shifts, orders : tuple
        The plant, the catalogue, the horizon (in time order) and the demand.
        Only products named in at least one order are planned.
    dwell : pandas.DataFrame
        The dwell table, one row per (product, oven, oven_setting, tunnel,
        tunnel_setting, loading); the planner reads the columns in
        :data:`DWELL_COLUMNS`. Only rows with ``feasible`` true are used.
        ``cook_min`` [min] is the cook dwell of the largest piece (margin
        included); ``max_belt_speed_m_per_min`` [m/min] the fastest belt
        that still meets the chill rule.
    objective : Objective
        What to optimise.
    fixed_output_kg : float or None
        Total output [kg] the LEAST_ENERGY objective must reach; ``None`` =
        the order minimums.
    back_to_back : bool
        Shifts run back to back: a tunnel belt may carry product from one
        shift into the next (never past the last shift).
    """

    ovens: tuple[OvenData, ...]
    tunnels: tuple[TunnelData, ...]
    products: tuple[ProductData, ...]
    shifts: tuple[ShiftData, ...]
    orders: tuple[OrderData, ...]
    dwell: pd.DataFrame
    objective: Objective = Objective.MOST_KG
    fixed_output_kg: float | None = None
    back_to_back: bool = False

    def __post_init__(self) -> None:
        for name in ("ovens", "tunnels", "products", "shifts", "orders"):
            object.__setattr__(self, name, tuple(getattr(self, name)))
        for name, kind in (
            ("ovens", OvenData),
            ("tunnels", TunnelData),
            ("products", ProductData),
            ("shifts", ShiftData),
            ("orders", OrderData),
        ):
            items = getattr(self, name)
            if not items:
                raise PlanInputError(f"inputs.{name}: needs at least one entry")
            if not all(isinstance(x, kind) for x in items):
                raise PlanInputError(f"inputs.{name}: entries must be {kind.__name__}")
        for name in ("ovens", "tunnels", "products", "shifts"):
            keys = [x.name for x in getattr(self, name)]
            if len(set(keys)) != len(keys):
                raise PlanInputError(f"inputs.{name}: names must be unique, got {keys}")
        machines = [o.name for o in self.ovens] + [t.name for t in self.tunnels]
        if len(set(machines)) != len(machines):
            raise PlanInputError(
                f"inputs: oven and tunnel names must differ from each other, got {machines}"
            )
        products = {p.name for p in self.products}
        shifts = {s.name for s in self.shifts}
        for o in self.orders:
            if o.product not in products:
                raise PlanInputError(
                    f"order.product: {o.product!r} is not a product; known: {sorted(products)}"
                )
            if o.due_shift is not None and o.due_shift not in shifts:
                raise PlanInputError(
                    f"order for {o.product!r}.due_shift: {o.due_shift!r} is not a shift; "
                    f"known: {[s.name for s in self.shifts]}"
                )
        for s in self.shifts:
            unknown = sorted(set(s.machine_minutes) - set(machines))
            if unknown:
                raise PlanInputError(
                    f"shift {s.name!r}.machine_minutes: unknown machines {unknown}; "
                    f"known: {machines}"
                )
            for x in s.stops:
                if x.machine is not None and x.machine not in machines:
                    raise PlanInputError(
                        f"shift {s.name!r}.stops: unknown machine {x.machine!r}; known: {machines}"
                    )
            for x in s.stops:
                if x.start is None:
                    continue
                for m in machines:
                    if x.applies_to(m) and x.start + x.minutes > s.window(m) + 1e-9:
                        raise PlanInputError(
                            f"shift {s.name!r}.stops: a stop of {m!r} from {x.start:g} min "
                            f"runs past its {s.window(m):g} min in the shift"
                        )
        if not isinstance(self.objective, Objective):
            raise PlanInputError(
                f"inputs.objective: must be an Objective ({[o.value for o in Objective]}), "
                f"got {self.objective!r}"
            )
        if self.fixed_output_kg is not None:
            _number("inputs", "fixed_output_kg", self.fixed_output_kg)
        if not isinstance(self.dwell, pd.DataFrame):
            raise PlanInputError("inputs.dwell: must be a pandas DataFrame (the dwell table)")
        missing = [c for c in DWELL_COLUMNS if c not in self.dwell.columns]
        if missing:
            raise PlanInputError(f"inputs.dwell: missing columns {missing}")

    def shift_index(self, name: str) -> int:
        """Position of shift ``name`` in the horizon (0-based)."""
        for i, s in enumerate(self.shifts):
            if s.name == name:
                return i
        raise PlanInputError(f"unknown shift {name!r}; known: {[s.name for s in self.shifts]}")

    def product(self, name: str) -> ProductData:
        """The product called ``name``."""
        for p in self.products:
            if p.name == name:
                return p
        raise PlanInputError(f"unknown product {name!r}")
