"""The design file: load a converter's TOML description and validate it into SI floats.

:func:`load_design` reads a file, :func:`design_from_dict` validates an already-parsed mapping.
Every quantity may be a number in SI units or a string with units (``"40 uH"``); the result is a
frozen :class:`Design` of plain floats (°C for temperatures, fractions for percentages).

Every problem raises :class:`~partcheck.errors.DesignError` naming the file, the dotted key, the
value found and what was expected; an unknown key suggests the closest valid one.  Checks that
need the operating point (duty at vin_min, D + D2, clamp above the reflected voltage at each
corner) run in :mod:`partcheck.stress.validity` when the engine evaluates the design; the checks
here are the ones the file alone decides.  The key reference is ``docs/design-file.md``.
"""

from __future__ import annotations

import datetime as _dt
import difflib
import math
import re
import sys
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .errors import DesignError, QuantityError
from .units import as_date, format_quantity, parse_quantity

#: Controller maximum duty when the design does not state one (common practice).
DEFAULT_MAX_DUTY = 0.9

#: Current-sense-to-gate-off delay assumed when ``converter.current_limit`` is given without
#: ``current_limit_delay``: a typical controller's figure.  Controller data sheets commonly state
#: 100-250 ns for the current-limit propagation delay, including the leading-edge blanking
#: comparator delay and the driver turn-off (``common practice``, from memory).  A default of 0
#: would flatter the current-limit corners: the peak overshoots the limit by Vin·t/(Lm + Llk).
DEFAULT_CURRENT_LIMIT_DELAY_S = 150e-9

#: The mission profile assumed when the design has no ``[[mission]]`` tables; the report states it.
DEFAULT_MISSION_TEXT = (
    "no [[mission]] profile given: life assumed at 100 % of the time at full load, nominal input "
    "(vin_nom) and ambient_max (conservative: every operating hour at the hottest rated condition)"
)

#: Roles a reference may be mapped to in ``[roles]`` (optionally ``"role:<output name>"``).
KNOWN_ROLES: tuple[str, ...] = (
    "switch", "rectifier", "clamp", "clamp_diode", "input_cap", "output_cap", "current_sense",
    "feedback_divider", "optocoupler", "shunt_reference", "transformer", "gate_resistor", "snubber",
)

_REF_RE = re.compile(r"^[A-Za-z][A-Za-z0-9_.\-+]*$")


@dataclass(frozen=True)
class Converter:
    """``[converter]``: topology, control scheme and switching limits."""

    topology: str  # "flyback"
    control: str  # "primary-side" | "optocoupler"
    switching: str  # "fixed" | "boundary"
    fsw: float | None  # fixed: switching frequency; boundary: maximum frequency (None = no clamp) [Hz]
    efficiency: float  # estimated Po/Pin [-]
    current_limit: float | None  # switch peak-current limit [A]
    current_limit_delay: float  # comparator + driver delay that lets the peak overshoot the limit [s]
    max_duty: float  # controller maximum duty [-]
    valley: int  # boundary mode: the valley the controller turns on at (1 = first) [-]
    # False when current_limit_delay is the default (DEFAULT_CURRENT_LIMIT_DELAY_S with a current
    # limit, 0 without one), so the report can state the assumption.
    current_limit_delay_given: bool = False


@dataclass(frozen=True)
class InputRange:
    """``[input]``: DC input at the primary. [V]"""

    vin_min: float
    vin_nom: float
    vin_max: float
    vin_surge: float | None


@dataclass(frozen=True)
class Output:
    """One ``[[output]]``: a secondary winding, its rectifier and its output bank."""

    name: str
    vout: float  # [V]
    iout: float  # full-load current [A]
    vf: float  # rectifier forward drop; 0 when not given [V]
    vf_given: bool
    turns_ratio: float  # Np/Ns of this winding (derived from volts per turn when not given) [-]
    turns_ratio_given: bool
    cout: float | None  # bank capacitance [F]
    esr: float | None  # bank ESR [Ω]
    dcr: float | None  # winding DC resistance [Ω]
    leakage: float | None = None  # secondary leakage inductance, for the rectifier ring [H]
    winding_capacitance: float | None = None  # secondary winding capacitance across the rectifier [F]


@dataclass(frozen=True)
class Transformer:
    """``[transformer]``: inductances referred to the primary, optional core data."""

    lm: float  # magnetizing inductance [H]
    llk: float  # leakage inductance [H]
    dcr_pri: float | None  # primary winding resistance [Ω]
    turns_primary: int | None  # Np, for the flux density [-]
    ae: float | None  # effective core area [m²]


@dataclass(frozen=True)
class Clamp:
    """``[clamp]``: the primary clamp that catches the leakage energy.

    None in an optional field means "not given": :func:`partcheck.stress.clamp.resolve` applies
    the stated default (``docs/design-file.md``, ``[clamp]``).
    """

    kind: str  # "zener" | "tvs" | "rcd"
    # clamp voltage across the primary: Zener/TVS clamping voltage at its peak current, or the RCD
    # capacitor voltage; with an RCD resistor the designer's expected value (inf: not given) [V]
    vclamp: float
    resistor: float | None = None  # RCD: total clamp resistance; decides the clamp voltage [Ω]
    capacitor: float | None = None  # RCD: clamp capacitance, for the ripple [F]
    tolerance: float | None = None  # Zener/TVS voltage tolerance [-]
    tempco: float | None = None  # Zener/TVS breakdown temperature coefficient [1/K]
    t_junction: float | None = None  # Zener/TVS junction temperature [°C]
    v_forward_recovery: float | None = None  # clamp-diode forward-recovery overshoot [V]
    loop_inductance: float | None = None  # clamp-loop stray inductance [H]
    diode_type: str = "ultrafast"  # clamp (blocking) diode: "ultrafast" | "standard" | "schottky" | "sic"


@dataclass(frozen=True)
class Environment:
    """``[environment]``."""

    ambient_max: float  # [°C]
    ambient_min: float | None  # [°C]


@dataclass(frozen=True)
class ExtraStress:
    """One ``[[extra_stress]]``: user-given stresses for parts outside the modelled power stage."""

    refs: tuple[str, ...]
    voltage: float | None = None  # [V]
    current_rms: float | None = None  # [A]
    current_peak: float | None = None  # [A]
    power: float | None = None  # [W]
    temperature: float | None = None  # [°C]
    note: str = ""


@dataclass(frozen=True)
class OutOfScope:
    """One ``[[out_of_scope]]``: references the design declares outside this check, with the reason."""

    refs: tuple[str, ...]
    reason: str


@dataclass(frozen=True)
class Measured:
    """One ``[[measured]]``: a bench-measured stress that replaces the model's for one reference."""

    ref: str
    parameter: str  # voltage, current_peak, current_rms, temperature, power
    value: float  # SI (°C for temperatures)
    note: str = ""


@dataclass(frozen=True)
class MissionPoint:
    """One ``[[mission]]`` point: a share of the operating time at one load, ambient and input."""

    time: float  # fraction of the operating time, in (0, 1]; the points sum to 1 [-]
    load: float  # fraction of full load (every output's iout scaled), in (0, 1] [-]
    ambient_c: float  # ambient temperature [°C]
    vin: float | None  # DC input; None = the design's vin_nom [V]


@dataclass(frozen=True)
class Design:
    """A validated design: every quantity an SI float (°C for temperatures)."""

    name: str
    path: Path | None
    bom: Path | None
    policy: str | None
    converter: Converter
    input: InputRange
    outputs: tuple[Output, ...]
    transformer: Transformer
    clamp: Clamp | None
    environment: Environment
    switch_node_capacitance: float | None = None  # total drain-node capacitance [F]
    roles: dict[str, tuple[str, ...]] = field(default_factory=dict)
    pins: dict[str, str] = field(default_factory=dict)
    extra_stress: tuple[ExtraStress, ...] = ()
    tolerances: dict[str, float] = field(default_factory=dict)
    requirements: dict[str, float] = field(default_factory=dict)
    waivers: tuple[dict[str, Any], ...] = ()
    feedback: dict[str, float | str] = field(default_factory=dict)
    mission: tuple[MissionPoint, ...] = ()  # empty when the file has no [[mission]]
    measured: tuple[Measured, ...] = ()  # bench figures that replace the model's
    out_of_scope: tuple[OutOfScope, ...] = ()  # references declared outside the check
    # [bom_read]: how the BOM is read, as read_bom keywords (columns, sheet, decimal_comma); only given keys
    bom_read: dict[str, Any] = field(default_factory=dict)
    raw: dict[str, Any] = field(default_factory=dict)

    @property
    def file(self) -> str | None:
        """The file name for error messages."""
        return str(self.path) if self.path is not None else None

    def output(self, name: str) -> Output:
        """The output called ``name``."""
        for out in self.outputs:
            if out.name == name:
                return out
        raise KeyError(name)


# --------------------------------------------------------------------------------------------
# Loading
# --------------------------------------------------------------------------------------------


def load_design(path: str | Path) -> Design:
    """Read and validate a design file (TOML).

    Raises
    ------
    DesignError
        The file is missing, is not TOML, or describes an impossible converter; the message names
        the file, the dotted key, the value and what was expected.
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise DesignError("the design file does not exist", file=path) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise DesignError(f"cannot read the design file ({exc})", file=path) from None
    if "\x00" in text:
        raise DesignError("contains NUL characters: UTF-16 text without a byte-order mark, or a binary file; "
                          "save the design file as UTF-8 text", file=path)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise DesignError(f"not valid TOML: {exc}", file=path) from None
    except ValueError as exc:  # an integer of more than 4300 digits ("Exceeds the limit ...")
        raise DesignError(f"not valid TOML for a design file: {exc}", file=path) from None
    except RecursionError:  # tomllib recurses once per nested array or inline table
        raise DesignError("not valid TOML for a design file: arrays or inline tables nested too deeply",
                          file=path) from None
    return design_from_dict(data, file=path)


class _Reader:
    """Key-by-key access to one table with file/key-located errors."""

    def __init__(self, data: Any, prefix: str, file: Path | None, allowed: tuple[str, ...]):
        self.file = file
        self.prefix = prefix
        if not isinstance(data, dict):
            raise DesignError(f"expected a table, got {_show(data)}", file=file, key=prefix or None)
        self.data = data
        for key in data:
            if key not in allowed:
                raise DesignError(_unknown(key, allowed), file=file, key=self.key(key))

    def key(self, name: str) -> str:
        return f"{self.prefix}.{name}" if self.prefix else name

    def error(self, name: str, message: str) -> DesignError:
        return DesignError(message, file=self.file, key=self.key(name))

    def has(self, name: str) -> bool:
        return name in self.data

    def quantity(self, name: str, kind: str | None, *, required: bool = False, default=None,
                 positive: bool = False, nonnegative: bool = False) -> float | None:
        if name not in self.data:
            if required:
                raise self.error(name, f"missing; expected {_kind_text(kind)}")
            return default
        raw = self.data[name]
        try:
            value = parse_quantity(raw, kind)
        except QuantityError as exc:
            raise self.error(name, exc.message) from None
        if positive and not value > 0:
            raise self.error(name, f"{_show(raw)} must be greater than zero")
        if nonnegative and value < 0:
            raise self.error(name, f"{_show(raw)} must not be negative")
        return value

    def text(self, name: str, *, required: bool = False, default: str | None = None,
             choices: tuple[str, ...] | None = None) -> str | None:
        if name not in self.data:
            if required:
                raise self.error(name, "missing; expected a text")
            return default
        raw = self.data[name]
        if not isinstance(raw, str) or not raw.strip():
            raise self.error(name, f"expected a non-empty text, got {_show(raw)}")
        if choices is not None and raw not in choices:
            hint = difflib.get_close_matches(raw, choices, n=1)
            did = f" (did you mean {hint[0]!r}?)" if hint else ""
            raise self.error(name, f"{raw!r} is not one of {', '.join(map(repr, choices))}{did}")
        return raw


def _show(value: Any) -> str:
    return repr(value) if isinstance(value, str) else f"{value!r} ({type(value).__name__})"


def _kind_text(kind: str | None) -> str:
    from .units import KIND_NAMES

    return KIND_NAMES.get(kind, "a number")


def _unknown(key: str, allowed: tuple[str, ...]) -> str:
    hint = difflib.get_close_matches(key, allowed, n=1, cutoff=0.5)
    did = f"; did you mean {hint[0]!r}?" if hint else ""
    return f"unknown key {key!r}{did} (valid keys: {', '.join(allowed)})"


_TOP = ("name", "bom", "policy", "converter", "input", "output", "transformer", "clamp", "environment",
        "switch_node", "roles", "pins", "extra_stress", "tolerances", "requirements", "waiver", "feedback",
        "mission", "measured", "out_of_scope", "bom_read")


def design_from_dict(data: dict[str, Any], *, file: str | Path | None = None) -> Design:
    """Validate a parsed design mapping (as ``tomllib`` returns it) into a :class:`Design`.

    ``file`` is used in error messages and to resolve ``bom`` relative to the design file.
    """
    path = Path(file) if file is not None else None
    top = _Reader(data, "", path, _TOP)
    name = top.text("name", required=True)
    bom = top.text("bom")
    policy = top.text("policy")
    base = path.parent if path is not None else Path(".")

    converter = _converter(top, path)
    inp = _input(top, path)
    transformer, n_first = _transformer(top, path)
    outputs = _outputs(top, path, n_first)
    clamp = _clamp(top, path, transformer, outputs)
    environment = _environment(top, path)
    c_node = None
    if top.has("switch_node"):
        sn = _Reader(data["switch_node"], "switch_node", path, ("capacitance",))
        c_node = sn.quantity("capacitance", "F", positive=True)
    output_names = tuple(o.name for o in outputs)
    return Design(
        name=name,
        path=path,
        bom=(base / bom) if bom else None,
        policy=policy,
        converter=converter,
        input=inp,
        outputs=outputs,
        transformer=transformer,
        clamp=clamp,
        environment=environment,
        switch_node_capacitance=c_node,
        roles=_roles(data.get("roles", {}), path, output_names),
        pins=_pins(data.get("pins", {}), path),
        extra_stress=_extra_stress(data.get("extra_stress", []), path),
        tolerances=_tolerances(data.get("tolerances", {}), path),
        requirements=_requirements(data.get("requirements", {}), path),
        waivers=_waivers(data.get("waiver", []), path),
        feedback=_feedback(data.get("feedback", {}), path),
        mission=_mission(data["mission"], path, inp, environment) if "mission" in data else (),
        measured=_measured(data.get("measured", []), path),
        out_of_scope=_out_of_scope(data.get("out_of_scope", []), path),
        bom_read=_bom_read(data.get("bom_read", {}), path),
        raw=data,
    )


def _converter(top: _Reader, path: Path | None) -> Converter:
    if not top.has("converter"):
        raise top.error("converter", "missing table [converter]")
    r = _Reader(top.data["converter"], "converter", path,
                ("topology", "control", "switching", "fsw", "efficiency", "current_limit",
                 "current_limit_delay", "max_duty", "valley"))
    topology = r.text("topology", default="flyback", choices=("flyback",))
    control = r.text("control", default="primary-side", choices=("primary-side", "optocoupler"))
    switching = r.text("switching", default="fixed", choices=("fixed", "boundary"))
    fsw = r.quantity("fsw", "Hz", required=(switching == "fixed"), positive=True)
    eta = r.quantity("efficiency", None, required=True)
    if not 0.0 < eta <= 1.0:
        raise r.error("efficiency", f"{eta!r} is outside (0, 1]; write the efficiency as a fraction such as 0.85")
    ilim = r.quantity("current_limit", "A", positive=True)
    t_pd_given = r.has("current_limit_delay")
    t_pd = r.quantity("current_limit_delay", "s", nonnegative=True)
    if t_pd is None:
        t_pd = DEFAULT_CURRENT_LIMIT_DELAY_S if ilim is not None else 0.0
    max_duty = r.quantity("max_duty", None, default=DEFAULT_MAX_DUTY)
    if not 0.0 < max_duty < 1.0:
        raise r.error("max_duty", f"{max_duty!r} is outside (0, 1); write the maximum duty as a fraction such as 0.75")
    valley = r.data.get("valley", 1)
    if isinstance(valley, bool) or not isinstance(valley, int) or valley < 1:
        raise r.error("valley", f"{_show(valley)} is not a valley number; expected a whole number 1, 2, 3...")
    return Converter(topology, control, switching, fsw, eta, ilim, t_pd, max_duty, valley, t_pd_given)


def _input(top: _Reader, path: Path | None) -> InputRange:
    if not top.has("input"):
        raise top.error("input", "missing table [input]")
    r = _Reader(top.data["input"], "input", path, ("vin_min", "vin_nom", "vin_max", "vin_surge"))
    vmin = r.quantity("vin_min", "V", required=True, positive=True)
    vmax = r.quantity("vin_max", "V", required=True, positive=True)
    vnom = r.quantity("vin_nom", "V", default=None, positive=True)
    if vmin > vmax:
        raise r.error("vin_min", f"{format_quantity(vmin, 'V')} is above vin_max {format_quantity(vmax, 'V')}; "
                                 "expected vin_min <= vin_nom <= vin_max")
    if vnom is None:
        vnom = 0.5 * (vmin + vmax)
    elif not vmin <= vnom <= vmax:
        raise r.error("vin_nom", f"{format_quantity(vnom, 'V')} is outside vin_min..vin_max "
                                 f"({format_quantity(vmin, 'V')}..{format_quantity(vmax, 'V')})")
    surge = r.quantity("vin_surge", "V", positive=True)
    if surge is not None and surge < vmax:
        raise r.error("vin_surge", f"{format_quantity(surge, 'V')} is below vin_max {format_quantity(vmax, 'V')}; "
                                   "a surge is a voltage above the steady range")
    return InputRange(vmin, vnom, vmax, surge)


def _transformer(top: _Reader, path: Path | None) -> tuple[Transformer, float | None]:
    if not top.has("transformer"):
        raise top.error("transformer", "missing table [transformer]")
    r = _Reader(top.data["transformer"], "transformer", path,
                ("lm", "turns_ratio", "llk", "dcr_pri", "turns_primary", "ae"))
    lm = r.quantity("lm", "H", required=True, positive=True)
    llk = r.quantity("llk", "H", default=0.0, nonnegative=True)
    if llk >= lm:
        raise r.error("llk", f"{format_quantity(llk, 'H')} is not below lm {format_quantity(lm, 'H')}; "
                             "leakage is a small fraction of the magnetizing inductance")
    n = r.quantity("turns_ratio", None, positive=True)
    np_turns = r.data.get("turns_primary")
    if np_turns is not None and (isinstance(np_turns, bool) or not isinstance(np_turns, int) or np_turns < 1):
        raise r.error("turns_primary", f"{_show(np_turns)} is not a turn count; expected a whole number >= 1")
    ae = r.data.get("ae")
    if ae is not None:
        if isinstance(ae, str):  # "25 mm2" style: accept a plain number in m² or "<number> mm2"
            m = re.fullmatch(r"\s*([0-9.eE+-]+)\s*mm(?:2|²|\^2)\s*", ae)
            ae = float(m.group(1)) * 1e-6 if m else None
        if not isinstance(ae, (int, float)) or isinstance(ae, bool) or not 0 < ae <= sys.float_info.max:
            raise r.error("ae", f"{_show(r.data['ae'])} is not a core area; expected square metres (2.5e-5) "
                                "or a text such as \"25 mm2\"")
    return Transformer(lm, llk, r.quantity("dcr_pri", "ohm", nonnegative=True), np_turns,
                       float(ae) if ae is not None else None), n


def _outputs(top: _Reader, path: Path | None, n_first: float | None) -> tuple[Output, ...]:
    raw = top.data.get("output")
    if not raw:
        raise top.error("output", "missing: at least one [[output]] table with vout and iout")
    if isinstance(raw, dict):
        raw = [raw]
    if not isinstance(raw, list):
        raise top.error("output", f"expected [[output]] tables, got {_show(raw)}")
    outs: list[dict] = []
    names: set[str] = set()
    for i, item in enumerate(raw):
        r = _Reader(item, f"output[{i}]", path,
                    ("name", "vout", "iout", "vf", "cout", "esr", "turns_ratio", "dcr", "leakage",
                     "winding_capacitance"))
        name = r.text("name", default=f"out{i + 1}" if len(raw) > 1 else "out")
        if name in names:
            raise r.error("name", f"{name!r} is used by two outputs; expected a distinct name per output")
        names.add(name)
        vout = r.quantity("vout", "V", required=True)
        if vout == 0:
            raise r.error("vout", "0 V is not an output; expected the output's magnitude, such as 5 V")
        iout = r.quantity("iout", "A", required=True, positive=True)
        vf = r.quantity("vf", "V", nonnegative=True)
        n = r.quantity("turns_ratio", None, positive=True)
        if i == 0:
            if n is not None and n_first is not None and abs(n - n_first) > 1e-9 * n:
                raise r.error("turns_ratio", f"{n!r} differs from transformer.turns_ratio {n_first!r}; "
                                             "give the first output's turns ratio once")
            n = n if n is not None else n_first
            if n is None:
                raise r.error("turns_ratio", "missing: give Np/Ns in [transformer] turns_ratio or in the first [[output]]")
        outs.append({"name": name, "vout": abs(vout), "iout": iout, "vf": vf if vf is not None else 0.0,
                     "vf_given": vf is not None, "turns_ratio": n, "cout": r.quantity("cout", "F", positive=True),
                     "esr": r.quantity("esr", "ohm", nonnegative=True),
                     "dcr": r.quantity("dcr", "ohm", nonnegative=True),
                     "leakage": r.quantity("leakage", "H", positive=True),
                     "winding_capacitance": r.quantity("winding_capacitance", "F", nonnegative=True),
                     "key": r.key("turns_ratio")})
    # Same volts per turn on every winding (reference note sec. 7): derive or check n_j.
    vr = outs[0]["turns_ratio"] * (outs[0]["vout"] + outs[0]["vf"])
    result = []
    for o in outs:
        given = o["turns_ratio"] is not None
        if not given:
            o["turns_ratio"] = vr / (o["vout"] + o["vf"])
        else:
            vr_j = o["turns_ratio"] * (o["vout"] + o["vf"])
            if abs(vr_j - vr) > 0.05 * vr:
                raise DesignError(
                    f"{o['turns_ratio']!r} reflects {format_quantity(vr_j, 'V')} to the primary but the first output "
                    f"reflects {format_quantity(vr, 'V')}; every winding has the same volts per turn, so expected "
                    f"about {vr / (o['vout'] + o['vf']):.4g}", file=path, key=o["key"])
        key = o.pop("key")
        del key
        result.append(Output(turns_ratio_given=given, **o))
    return tuple(result)


_CLAMP_KEYS = ("kind", "vclamp", "resistor", "capacitor", "tolerance", "tempco", "t_junction", "v_forward_recovery",
               "loop_inductance", "diode_type")
_ZENER_ONLY = ("tolerance", "tempco", "t_junction")
_RCD_ONLY = ("resistor", "capacitor")


def _clamp(top: _Reader, path: Path | None, tr: Transformer, outs: tuple[Output, ...]) -> Clamp | None:
    from .stress.clamp import DIODE_TYPES

    if not top.has("clamp"):
        if tr.llk > 0:
            raise top.error("clamp", f"missing: transformer.llk is {format_quantity(tr.llk, 'H')}, so the leakage "
                                     "energy needs a [clamp] table (kind, vclamp); or set llk = 0")
        return None
    r = _Reader(top.data["clamp"], "clamp", path, _CLAMP_KEYS)
    kind = r.text("kind", default="zener", choices=("zener", "tvs", "rcd"))
    rcd = kind == "rcd"
    for key in _RCD_ONLY if not rcd else _ZENER_ONLY:
        if r.has(key):
            what = (f"a {kind} clamp has no {key}; it applies to kind = \"rcd\"" if not rcd else
                    f"{key} describes a Zener or TVS; an RCD clamp's voltage follows from clamp.resistor "
                    "(or is the fixed clamp.vclamp)")
            raise r.error(key, what)
    resistor = r.quantity("resistor", "ohm", positive=True)
    capacitor = r.quantity("capacitor", "F", positive=True)
    if rcd and resistor is None and not r.has("vclamp"):
        raise r.error("vclamp", "missing; an RCD clamp needs resistor (the total clamp resistance, which sets the "
                                "clamp voltage) or vclamp (a fixed clamp voltage), or both")
    vc = r.quantity("vclamp", "V", required=not (rcd and resistor is not None), positive=True)
    vr = outs[0].turns_ratio * (outs[0].vout + outs[0].vf)
    if vc is not None and vc <= vr:
        raise r.error("vclamp", f"{format_quantity(vc, 'V')} is at or below the reflected voltage "
                                f"{format_quantity(vr, 'V')} = n·(Vout + Vf); the clamp would conduct the "
                                "whole off-time. Expected a clamp voltage above it (1.5-2.5 × Vr is usual)")
    tol = r.quantity("tolerance", "%", nonnegative=True)
    if tol is not None and tol >= 0.5:
        raise r.error("tolerance", f"{_show(r.data['tolerance'])} is 50 % or more; expected the clamp voltage "
                                   "tolerance as a fraction such as 0.05 or \"5%\"")
    tempco = None
    if r.has("tempco"):
        raw = r.data["tempco"]
        text = raw.strip().removesuffix("/K").removesuffix("/ K").strip() if isinstance(raw, str) else raw
        try:
            tempco = parse_quantity(text, "%")
        except QuantityError:
            raise r.error("tempco", f"{_show(raw)} is not a temperature coefficient; expected a fraction per kelvin "
                                    "such as 0.001 or \"0.1 %/K\"") from None
        if not -0.01 <= tempco <= 0.01:
            raise r.error("tempco", f"{_show(raw)} is outside ±1 %/K; expected a fraction per kelvin such as 0.001 "
                                    "or \"0.1 %/K\"")
    tj = r.quantity("t_junction", "degC")
    if tj is not None and not -70.0 <= tj <= 250.0:
        raise r.error("t_junction", f"{format_quantity(tj, 'degC')} is outside -70..250 °C")
    v_fr = r.quantity("v_forward_recovery", "V", nonnegative=True)
    l_loop = r.quantity("loop_inductance", "H", nonnegative=True)
    if l_loop is not None and l_loop > 1e-6:
        raise r.error("loop_inductance", f"{format_quantity(l_loop, 'H')} is more than 1 µH; the clamp loop's stray "
                                         "inductance is a few to tens of nH (leakage belongs in transformer.llk)")
    diode = r.text("diode_type", default="ultrafast", choices=DIODE_TYPES)
    return Clamp(kind, vc if vc is not None else math.inf, resistor=resistor, capacitor=capacitor, tolerance=tol,
                 tempco=tempco, t_junction=tj, v_forward_recovery=v_fr, loop_inductance=l_loop, diode_type=diode)


def _environment(top: _Reader, path: Path | None) -> Environment:
    if not top.has("environment"):
        raise top.error("environment", "missing table [environment] with ambient_max")
    r = _Reader(top.data["environment"], "environment", path, ("ambient_max", "ambient_min"))
    t_max = r.quantity("ambient_max", "degC", required=True)
    t_min = r.quantity("ambient_min", "degC")
    for key, t in (("ambient_max", t_max), ("ambient_min", t_min)):
        if t is not None and not -70.0 <= t <= 200.0:
            raise r.error(key, f"{format_quantity(t, 'degC')} is outside -70..200 °C")
    if t_min is not None and t_min > t_max:
        raise r.error("ambient_min", f"{format_quantity(t_min, 'degC')} is above ambient_max")
    return Environment(t_max, t_min)


def _refs(value: Any, path: Path | None, key: str) -> tuple[str, ...]:
    items = [value] if isinstance(value, str) else value
    if not isinstance(items, list) or not items:
        raise DesignError(f"expected a reference such as \"Q1\" or a list of them, got {_show(value)}", file=path, key=key)
    for ref in items:
        if not isinstance(ref, str) or not _REF_RE.match(ref):
            raise DesignError(f"{_show(ref)} is not a reference designator; expected text such as \"C7\"",
                              file=path, key=key)
    return tuple(items)


def _roles(data: Any, path: Path | None, outputs: tuple[str, ...]) -> dict[str, tuple[str, ...]]:
    r = _Reader(data, "roles", path, tuple(data) if isinstance(data, dict) else ())
    result = {}
    for key, value in r.data.items():
        role, _, out = key.partition(":")
        if role not in KNOWN_ROLES:
            raise r.error(key, _unknown(role, KNOWN_ROLES).replace("unknown key", "unknown role"))
        if out and out not in outputs:
            raise r.error(key, f"no output named {out!r}; outputs are {', '.join(map(repr, outputs))}")
        result[key] = _refs(value, path, r.key(key))
    return result


def _pins(data: Any, path: Path | None) -> dict[str, str]:
    r = _Reader(data, "pins", path, tuple(data) if isinstance(data, dict) else ())
    for ref, pn in r.data.items():
        _refs(ref, path, r.key(ref))
        if not isinstance(pn, str) or not pn.strip():
            raise r.error(ref, f"expected a catalog part number, got {_show(pn)}")
    return dict(r.data)


_EXTRA_KINDS = {"voltage": "V", "current_rms": "A", "current_peak": "A", "power": "W", "temperature": "degC"}


def _extra_stress(data: Any, path: Path | None) -> tuple[ExtraStress, ...]:
    if not isinstance(data, list):
        raise DesignError(f"expected [[extra_stress]] tables, got {_show(data)}", file=path, key="extra_stress")
    result = []
    for i, item in enumerate(data):
        r = _Reader(item, f"extra_stress[{i}]", path, ("refs", *_EXTRA_KINDS, "note"))
        if not r.has("refs"):
            raise r.error("refs", "missing: the references this stress applies to")
        values = {k: r.quantity(k, kind) for k, kind in _EXTRA_KINDS.items()}
        if all(v is None for v in values.values()):
            raise r.error("refs", f"no stress given; expected at least one of {', '.join(_EXTRA_KINDS)}")
        note = r.text("note", default="")
        result.append(ExtraStress(_refs(r.data["refs"], path, r.key("refs")), note=note, **values))
    return tuple(result)


def _out_of_scope(data: Any, path: Path | None) -> tuple[OutOfScope, ...]:
    if isinstance(data, dict):
        data = [data]
    if not isinstance(data, list):
        raise DesignError(f"expected [[out_of_scope]] tables, got {_show(data)}", file=path, key="out_of_scope")
    result, seen = [], {}
    for i, item in enumerate(data):
        r = _Reader(item, f"out_of_scope[{i}]", path, ("refs", "reason"))
        for key in ("refs", "reason"):
            if not r.has(key):
                raise r.error(key, "missing: a part declared out of scope names its refs and the reason")
        refs = _refs(r.data["refs"], path, r.key("refs"))
        reason = r.text("reason")
        if not reason or not reason.strip():
            raise r.error("reason", "empty: say why the part is outside this check (who covers it instead)")
        for ref in refs:
            if ref.upper() in seen:
                raise r.error("refs", f"{ref} is already declared out of scope in out_of_scope[{seen[ref.upper()]}]")
            seen[ref.upper()] = i
        result.append(OutOfScope(refs, reason.strip()))
    return tuple(result)


_BOM_READ_KEYS = ("columns", "sheet", "decimal_comma")


def _bom_read(data: Any, path: Path | None) -> dict[str, Any]:
    """``[bom_read]``: how the design's BOM is read, as :func:`partcheck.bom.read.read_bom` keywords.

    ``columns`` is a table of BOM field → header text (``{ref = "Designator"}``; field names as
    ``--columns`` takes them), ``sheet`` the XLSX sheet, ``decimal_comma`` true or false.  Only the
    keys the file gives are returned; the command line's options win over them.
    """
    r = _Reader(data, "bom_read", path, _BOM_READ_KEYS)
    result: dict[str, Any] = {}
    if r.has("columns"):
        from .bom.columns import FIELD_ALIASES, SYNONYMS, normalise_header

        cols = r.data["columns"]
        if not isinstance(cols, dict) or not cols:
            raise r.error("columns", f"expected a table of BOM field = \"header\" such as "
                                     f"{{ref = \"Designator\", part_number = \"Mfr P/N\"}}, got {_show(cols)}")
        columns: dict[str, str] = {}
        field_of_header: dict[str, str] = {}
        for key, header in cols.items():
            where = r.key(f"columns.{key}")
            name = FIELD_ALIASES.get(key.lower())
            if name is None:
                hint = difflib.get_close_matches(key.lower(), tuple(FIELD_ALIASES), n=1, cutoff=0.5)
                did = f"; did you mean {hint[0]!r}?" if hint else ""
                raise DesignError(f"unknown BOM field {key!r}{did} (fields: {', '.join(SYNONYMS)})",
                                  file=path, key=where)
            if not isinstance(header, str) or not normalise_header(header):
                raise DesignError(f"expected the header text of a BOM column, such as \"Designator\", got "
                                  f"{_show(header)}", file=path, key=where)
            if name in columns:
                raise DesignError(f"{key!r} is another name for {name!r}, which this table already gives",
                                  file=path, key=where)
            norm = normalise_header(header)
            if norm in field_of_header:
                raise DesignError(f"column {header!r} is already given for {field_of_header[norm]!r}; one column "
                                  "holds one field", file=path, key=where)
            columns[name] = header.strip()
            field_of_header[norm] = name
        result["columns"] = columns
    if r.has("sheet"):
        result["sheet"] = r.text("sheet")
    if r.has("decimal_comma"):
        flag = r.data["decimal_comma"]
        if not isinstance(flag, bool):
            raise r.error("decimal_comma", f"expected true or false (leave it out to detect decimal commas), "
                                           f"got {_show(flag)}")
        result["decimal_comma"] = flag
    return result


#: Parameters a ``[[measured]]`` table may give, with their unit kinds.
MEASURED_KINDS = {"voltage": "V", "current_peak": "A", "current_rms": "A", "power": "W", "temperature": "degC"}


def _measured(data: Any, path: Path | None) -> tuple[Measured, ...]:
    if isinstance(data, dict):
        data = [data]
    if not isinstance(data, list):
        raise DesignError(f"expected [[measured]] tables, got {_show(data)}", file=path, key="measured")
    result = []
    seen: set[tuple[str, str]] = set()
    for i, item in enumerate(data):
        r = _Reader(item, f"measured[{i}]", path, ("ref", "parameter", "value", "note"))
        for key in ("ref", "parameter", "value"):
            if not r.has(key):
                raise r.error(key, "missing: a measured stress names ref, parameter and value")
        (ref,) = _refs(r.data["ref"], path, r.key("ref")) if isinstance(r.data["ref"], str) else (None,)
        if ref is None:
            raise r.error("ref", "expected one reference such as \"D1\"")
        parameter = r.text("parameter")
        if parameter not in MEASURED_KINDS:
            raise r.error("parameter", _unknown(str(parameter), tuple(MEASURED_KINDS)).replace("unknown key",
                                                                                              "unknown parameter"))
        if (ref.upper(), parameter) in seen:
            raise r.error("ref", f"{ref} {parameter} is measured twice; keep one figure (the worst)")
        seen.add((ref.upper(), parameter))
        value = r.quantity("value", MEASURED_KINDS[parameter], required=True)
        result.append(Measured(ref, parameter, abs(value) if parameter != "temperature" else value,
                               r.text("note", default="")))
    return tuple(result)


_TOLERANCE_KEYS = ("lm", "llk", "fsw", "vf", "efficiency", "vclamp", "current_limit", "vout")


def _tolerances(data: Any, path: Path | None) -> dict[str, float]:
    r = _Reader(data, "tolerances", path, _TOLERANCE_KEYS)
    result = {}
    for key in r.data:
        value = r.quantity(key, "%", nonnegative=True)
        if value >= 1.0:
            raise r.error(key, f"{_show(r.data[key])} is 100 % or more; expected a tolerance such as \"±10%\" or 0.1")
        result[key] = value
    return result


def _requirements(data: Any, path: Path | None) -> dict[str, float]:
    r = _Reader(data, "requirements", path, ("life_hours", "regulation"))
    result = {}
    if r.has("life_hours"):
        result["life_hours"] = r.quantity("life_hours", "h", positive=True)
    if r.has("regulation"):
        result["regulation"] = r.quantity("regulation", "%", positive=True)
    return result


def _date(value: Any, r: _Reader, key: str) -> _dt.date:
    date = as_date(value)
    if date is None:
        raise r.error(key, f"{_show(value)} is not a date; expected YYYY-MM-DD")
    return date


def _waivers(data: Any, path: Path | None) -> tuple[dict[str, Any], ...]:
    if isinstance(data, dict):
        data = [data]
    if not isinstance(data, list):
        raise DesignError(f"expected [[waiver]] tables, got {_show(data)}", file=path, key="waiver")
    result = []
    for i, item in enumerate(data):
        r = _Reader(item, f"waiver[{i}]", path, ("ref", "parameter", "reason", "approved_by", "date", "expires"))
        w: dict[str, Any] = {}
        for key in ("ref", "parameter", "reason", "approved_by"):
            w[key] = r.text(key, required=True)
        _refs(w["ref"], path, r.key("ref"))
        if not r.has("date"):
            raise r.error("date", "missing: the date the waiver was approved (YYYY-MM-DD)")
        w["date"] = _date(r.data["date"], r, "date")
        w["expires"] = _date(r.data["expires"], r, "expires") if r.has("expires") else None
        if w["expires"] is not None and w["expires"] < w["date"]:
            raise r.error("expires", f"{w['expires']} is before the approval date {w['date']}")
        result.append(w)
    return tuple(result)


_MISSION_KEYS = ("time", "load", "ambient", "vin")


def _mission(data: Any, path: Path | None, inp: InputRange, env: Environment) -> tuple[MissionPoint, ...]:
    if isinstance(data, dict):
        data = [data]
    if not isinstance(data, list) or not data:
        raise DesignError(f"expected one or more [[mission]] tables, got {_show(data)}", file=path, key="mission")
    points = []
    for i, item in enumerate(data):
        r = _Reader(item, f"mission[{i}]", path, _MISSION_KEYS)
        time = r.quantity("time", "%", required=True)
        if not 0.0 < time <= 1.0:
            raise r.error("time", f"{_show(r.data['time'])} is outside (0, 1]; expected the fraction of the "
                                  "operating time at this point, such as 0.7 or \"70 %\"")
        load = r.quantity("load", "%", required=True)
        if not 0.0 < load <= 1.0:
            raise r.error("load", f"{_show(r.data['load'])} is outside (0, 1]; expected the fraction of full "
                                  "load, such as 0.5 or \"50 %\"")
        ambient = r.quantity("ambient", "degC", required=True)
        t_low = env.ambient_min if env.ambient_min is not None else -70.0
        if not t_low <= ambient <= env.ambient_max:
            low = "environment.ambient_min" if env.ambient_min is not None else "-70 °C"
            raise r.error("ambient", f"{format_quantity(ambient, 'degC')} is outside {low}..environment.ambient_max "
                                     f"({format_quantity(t_low, 'degC')}..{format_quantity(env.ambient_max, 'degC')}); "
                                     "the stress checks run at ambient_max, so no mission point may be hotter")
        vin = r.quantity("vin", "V")
        if vin is not None and not inp.vin_min <= vin <= inp.vin_max:
            raise r.error("vin", f"{format_quantity(vin, 'V')} is outside vin_min..vin_max "
                                 f"({format_quantity(inp.vin_min, 'V')}..{format_quantity(inp.vin_max, 'V')})")
        points.append(MissionPoint(time, load, ambient, vin))
    total = math.fsum(p.time for p in points)
    if abs(total - 1.0) > 1e-6:
        raise DesignError(f"the [[mission]] times sum to {total:.9g}; expected 1 (100 % of the operating time)",
                          file=path, key="mission")
    return tuple(points)


def mission_points(design: Design) -> tuple[MissionPoint, ...]:
    """The design's mission profile, or the stated default of :data:`DEFAULT_MISSION_TEXT`.

    The default is one point: 100 % of the time at full load, nominal input (``vin=None``, that
    is ``input.vin_nom``) and ``environment.ambient_max``.  A point's ``vin`` of ``None`` always
    means ``design.input.vin_nom``.
    """
    if design.mission:
        return design.mission
    return (MissionPoint(time=1.0, load=1.0, ambient_c=design.environment.ambient_max, vin=None),)


def _feedback(data: Any, path: Path | None) -> dict[str, float | str]:
    r = _Reader(data, "feedback", path, tuple(data) if isinstance(data, dict) else ())
    result: dict[str, float | str] = {}
    for key, value in r.data.items():
        if isinstance(value, bool) or not isinstance(value, (int, float, str)):
            raise r.error(key, f"expected a number or a quantity such as \"1 kOhm\", got {_show(value)}")
        if isinstance(value, str):
            result[key] = _any_quantity(value)
        else:
            try:  # through the parser: NaN, infinity and integers beyond the float range are errors
                result[key] = parse_quantity(value, None)
            except QuantityError as exc:
                raise r.error(key, exc.message) from None
    return result


def _any_quantity(text: str) -> float | str:
    """A quantity of whatever unit it carries, as an SI float; the text itself when it is none."""
    for kind in ("ohm", "V", "A", "W", "Hz", "F", "H", "s", "degC", "%"):
        try:
            return parse_quantity(text, kind)
        except QuantityError:
            continue
    return text
