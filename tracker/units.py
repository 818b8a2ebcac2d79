"""Unit systems at the edges: every conversion between the metric units Pourback
computes in (mm, cm, cm², cm³, kg, °C) and US customary units (in, in², in³,
lb, °F) happens here and nowhere else.

Inside, everything stays metric. A person types and reads numbers in the log's
unit system (``metric`` or ``us``); parsing converts to metric on the way in and
display converts from metric on the way out.

The factors are exact by definition (international yard and pound agreement,
1959): 1 in = 25.4 mm, 1 lb = 0.45359237 kg; °F = °C × 9/5 + 32, and a
temperature *difference* of 1 K (or 1 °C) is 1.8 °F.

A quantity's kind is named by the metric unit it is stored in; a column or a
JSON key names its unit as a suffix (``diameter_mm``, ``volume_cm3``,
``casting_weight_kg``, ``metal_cost_per_kg``, ``pour_temp_c``). In ``us`` the
same name carries the customary suffix (``diameter_in``, ``volume_in3``,
``casting_weight_lb``, ``metal_cost_per_lb``, ``pour_temp_f``).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

from tracker.errors import BadInput

METRIC = "metric"
US = "us"
SYSTEMS = (METRIC, US)
DEFAULT_SYSTEM = METRIC

MM_PER_IN = 25.4  # exact
CM_PER_IN = 2.54  # exact
KG_PER_LB = 0.45359237  # exact
CM2_PER_IN2 = CM_PER_IN ** 2  # 6.4516, exact
CM3_PER_IN3 = CM_PER_IN ** 3  # 16.387064, exact
F_PER_K = 1.8  # a difference of 1 K (= 1 °C) is 1.8 °F


@dataclass(frozen=True)
class Kind:
    """One kind of quantity: its unit symbol and name suffix in each system and
    the conversion from metric to US (``to_us``) and back (``to_metric``)."""

    name: str
    metric_symbol: str
    us_symbol: str
    metric_suffix: str
    us_suffix: str
    to_us: Callable
    to_metric: Callable

    def symbol(self, system: str) -> str:
        return self.us_symbol if system == US else self.metric_symbol


def _scale(factor: float) -> tuple[Callable, Callable]:
    return (lambda x: x / factor), (lambda x: x * factor)


KINDS = {k.name: k for k in (
    Kind("length_mm", "mm", "in", "_mm", "_in", *_scale(MM_PER_IN)),
    Kind("length_cm", "cm", "in", "_cm", "_in", *_scale(CM_PER_IN)),  # moduli, thicknesses in cm
    Kind("area_cm2", "cm²", "in²", "_cm2", "_in2", *_scale(CM2_PER_IN2)),
    Kind("volume_cm3", "cm³", "in³", "_cm3", "_in3", *_scale(CM3_PER_IN3)),
    Kind("mass_kg", "kg", "lb", "_kg", "_lb", *_scale(KG_PER_LB)),
    # money per unit mass: per kg -> per lb is a smaller number (× kg/lb)
    Kind("per_kg", "per kg", "per lb", "_per_kg", "_per_lb",
         lambda x: x * KG_PER_LB, lambda x: x / KG_PER_LB),
    Kind("temp_c", "°C", "°F", "_c", "_f", lambda x: x * F_PER_K + 32.0, lambda x: (x - 32.0) / F_PER_K),
    Kind("temp_diff_k", "K", "°F", "_k", "_f", lambda x: x * F_PER_K, lambda x: x / F_PER_K),
    Kind("temp_diff_c", "°C", "°F", "_c", "_f", lambda x: x * F_PER_K, lambda x: x / F_PER_K),
    # The Niyama criterion G / sqrt(dT/dt): (K/cm) / (K/min)^0.5 = K^0.5 min^0.5 / cm; in US
    # units (°F/in) / (°F/min)^0.5, so x sqrt(1.8) for the temperature and x 2.54 for per cm -> per in.
    Kind("niyama", "(°C·min)^0.5/cm", "(°F·min)^0.5/in", "_niyama", "_niyama",
         lambda x: x * F_PER_K ** 0.5 * CM_PER_IN, lambda x: x / (F_PER_K ** 0.5 * CM_PER_IN)),
)}

# Temperatures are never guessed from a suffix ("_c" also ends names such as a
# Caine constant): every temperature name is listed here with its kind.
TEMPERATURES = {
    "pour_temp_c": "temp_c",
    "liquidus_c": "temp_c",
    "solidus_c": "temp_c",
    "mould_temp_c": "temp_c",
    "temp_bin_c": "temp_c",
    "pour_temp_dev_c": "temp_diff_c",
    "superheat_k": "temp_diff_k",
    "default_superheat_k": "temp_diff_k",
}

# Longest suffix first, so "_per_kg" wins over "_kg" and "_cm3" over "_cm".
_SUFFIXES = sorted(((k.metric_suffix, k.name) for k in KINDS.values()
                    if k.name in ("length_mm", "length_cm", "area_cm2", "volume_cm3", "mass_kg", "per_kg")),
                   key=lambda p: -len(p[0]))


def check_system(value) -> str:
    """``metric`` or ``us`` (any case, surrounding spaces ignored), or ``BadInput``."""
    text = value.strip().lower() if isinstance(value, str) else value
    if text not in SYSTEMS:
        raise BadInput("units", value, "give 'metric' (mm, cm³, kg, °C) or 'us' (in, in³, lb, °F)")
    return text


def kind_of(name: str) -> Kind | None:
    """The kind of quantity a metric column or key holds, from its unit suffix;
    ``None`` when it carries no unit that converts (counts, ratios, money, %)."""
    if name in TEMPERATURES:
        return KINDS[TEMPERATURES[name]]
    for suffix, kind in _SUFFIXES:
        if name.endswith(suffix) and len(name) > len(suffix):
            return KINDS[kind]
    for infix, kind in _INFIXES.items():
        if infix in name:
            return KINDS[kind]
    return None


# A mass per item names its unit inside the name: added_metal_kg_per_mold.
_INFIXES = {"_kg_per_": "mass_kg"}


def column_name(metric_name: str, system: str) -> str:
    """The name a metric column or key takes in ``system``:
    ``column_name("diameter_mm", "us") == "diameter_in"``,
    ``column_name("added_metal_kg_per_mold", "us") == "added_metal_lb_per_mold"``."""
    kind = kind_of(metric_name)
    if system != US or kind is None:
        return metric_name
    if metric_name in TEMPERATURES or metric_name.endswith(kind.metric_suffix):
        return metric_name[: -len(kind.metric_suffix)] + kind.us_suffix
    infix = next(i for i, k in _INFIXES.items() if k == kind.name and i in metric_name)
    return metric_name.replace(infix, "_lb_per_", 1)


def us_names(metric_names) -> dict[str, str]:
    """``{us name: metric name}`` for the metric names that convert; used to read
    a file whose columns may be in either system."""
    out: dict[str, str] = {}
    for name in metric_names:
        us = column_name(name, US)
        if us != name:
            if us in out:  # two metric names would read from one customary column
                raise ValueError(f"{out[us]} and {name} both become {us}")
            out[us] = name
    return out


def to_system(metric_name: str, value, system: str):
    """A metric value (scalar, numpy array or pandas Series) of the named
    quantity, in ``system``; unchanged in metric or for names without a unit."""
    kind = kind_of(metric_name)
    if system != US or kind is None or value is None:
        return value
    return kind.to_us(value)


def to_metric(metric_name: str, value, system: str):
    """A value typed in ``system`` for the named metric quantity, in metric."""
    kind = kind_of(metric_name)
    if system != US or kind is None or value is None:
        return value
    return kind.to_metric(value)


def symbol(metric_name_or_kind: str, system: str) -> str:
    """The unit symbol of a metric name (``"diameter_mm"``) or a kind name
    (``"length_mm"``) in ``system``: ``"in"``, ``"cm³"``, ``"°F"``..."""
    kind = KINDS.get(metric_name_or_kind) or kind_of(metric_name_or_kind)
    if kind is None:
        raise KeyError(f"{metric_name_or_kind} carries no unit")
    return kind.symbol(system)


def convert_record(record: dict, system: str) -> dict:
    """A dict with metric keys, its keys renamed and values converted to
    ``system``; nested dicts and lists of dicts are converted too."""
    if system != US:
        return record
    out = {}
    for key, value in record.items():
        if isinstance(value, dict):
            value = convert_record(value, system)
        elif isinstance(value, list):
            value = [convert_record(v, system) if isinstance(v, dict) else v for v in value]
        elif isinstance(value, (int, float)) and not isinstance(value, bool):
            value = to_system(key, value, system)
        out[column_name(key, system)] = value
    return out


def convert_frame(frame, system: str):
    """A pandas DataFrame with metric column names, converted to ``system``
    (a copy; columns without a unit are kept as they are)."""
    if system != US:
        return frame
    out = frame.copy()
    renames = {}
    for col in out.columns:
        if isinstance(col, str) and kind_of(col) is not None:
            out[col] = to_system(col, out[col], system)
            renames[col] = column_name(col, system)
    return out.rename(columns=renames)


def default_step_mm(system: str) -> float:
    """The shop's diameter step for rounding a riser up: 10 mm in metric
    (common practice), 1/2 in = 12.7 mm in US shops (common practice)."""
    return 0.5 * MM_PER_IN if system == US else 10.0


# Decimals a value shows by default, per kind and system: a few tenths of a
# millimetre matter nowhere in a riser, a hundredth of an inch is about 0.25 mm.
_DIGITS = {
    ("length_mm", METRIC): 0, ("length_mm", US): 2,
    ("length_cm", METRIC): 2, ("length_cm", US): 2,
    ("area_cm2", METRIC): 0, ("area_cm2", US): 1,
    ("volume_cm3", METRIC): 0, ("volume_cm3", US): 1,
    ("mass_kg", METRIC): 2, ("mass_kg", US): 2,
    ("per_kg", METRIC): 2, ("per_kg", US): 2,
    ("temp_c", METRIC): 0, ("temp_c", US): 0,
    ("temp_diff_k", METRIC): 0, ("temp_diff_k", US): 0,
    ("temp_diff_c", METRIC): 0, ("temp_diff_c", US): 0,
    ("niyama", METRIC): 2, ("niyama", US): 2,
}


def _kind(metric_name_or_kind: str) -> Kind:
    kind = KINDS.get(metric_name_or_kind) or kind_of(metric_name_or_kind)
    if kind is None:
        raise KeyError(f"{metric_name_or_kind} carries no unit")
    return kind


def value_in(metric_name_or_kind: str, value, system: str):
    """A metric value of a named quantity or a kind (``"length_mm"``) in ``system``."""
    if value is None or system != US:
        return value
    return _kind(metric_name_or_kind).to_us(value)


def value_from(metric_name_or_kind: str, value, system: str):
    """A value typed in ``system`` for a named quantity or a kind, in metric."""
    if value is None or system != US:
        return value
    return _kind(metric_name_or_kind).to_metric(value)


def number(metric_name_or_kind: str, value, system: str, digits: int | None = None) -> str:
    """A metric value as text in ``system``, without its unit: ``number("diameter_mm",
    127.0, "us") == "5.00"``; ``digits`` decimals (default: the kind's usual)."""
    kind = _kind(metric_name_or_kind)
    if digits is None:
        digits = _DIGITS[(kind.name, system if system == US else METRIC)]
    return f"{value_in(kind.name, float(value), system):,.{digits}f}"


def show(metric_name_or_kind: str, value, system: str, digits: int | None = None) -> str:
    """A metric value as text in ``system`` with its unit: ``show("diameter_mm",
    127.0, "us") == "5.00 in"``, ``show("pour_temp_c", 1600, "us") == "2,912 °F"``."""
    kind = _kind(metric_name_or_kind)
    return f"{number(kind.name, value, system, digits)} {kind.symbol(system)}"


def label(text: str, metric_name_or_kind: str, system: str) -> str:
    """A heading naming its unit: ``label("Riser diameter", "diameter_mm", "us")
    == "Riser diameter (in)"``."""
    return f"{text} ({symbol(metric_name_or_kind, system)})"


def option_name(metric_name: str, system: str) -> str:
    """The command-line option of a metric quantity in ``system``:
    ``option_name("volume_cm3", "us") == "--volume-in3"``."""
    return "--" + column_name(metric_name, system).replace("_", "-")


def round_up(metric_name: str, value, step, system: str) -> float:
    """A metric value rounded up to a step given in ``system``'s unit (a shop's
    diameter step: 10 mm, or 1/2 in = 12.7 mm on the inch grid); metric out."""
    import math

    if not (step > 0):
        raise BadInput(column_name("step" + _kind(metric_name).metric_suffix, system), step,
                       "the diameter step must be above 0 (for example "
                       + ("1/2 in: 0.5)" if system == US else "10 mm)"))
    shown = value_in(metric_name, float(value), system)
    return value_from(metric_name, math.ceil(shown / step - 1e-9) * step, system)


def say(metric_name_or_kind: str, value, system: str, metric_format: str = ".0f") -> str:
    """A figure with its unit inside a sentence: in metric exactly as the text
    always wrote it (``f"{value:{metric_format}} mm"``), in US in the kind's
    usual decimals (``"5.12 in"``, ``"2,912 °F"``)."""
    if system != US:
        return f"{value:{metric_format}} {_kind(metric_name_or_kind).metric_symbol}"
    return show(metric_name_or_kind, value, system)
