"""Data tables of the calc core: pipe materials, standard pipe sizes and fitting loss coefficients, each with its source."""

from __future__ import annotations

import bisect
import json
import math
import re
from dataclasses import dataclass
from importlib import resources
from typing import Mapping

from calc.units import InputError

__all__ = [
    "Material",
    "PipeSize",
    "FittingType",
    "material",
    "materials",
    "pipe_size",
    "size_standards",
    "size_options",
    "sizes_in_order",
    "fitting",
    "fittings",
    "k_hooper_1981",
    "k_darby_2001",
    "darby_nominal_size",
    "fitting_K",
    "k_coefficients",
]

INCH = 0.0254  # [m], exact by definition
MM = 1e-3
GPA = 1e9


@dataclass(frozen=True)
class Material:
    """A pipe wall material. Lengths in [m], modulus in [Pa]; citations are full text."""

    key: str
    name: str
    eps_new: float
    eps_aged: float | None
    E: float
    nu_poisson: float
    source_roughness: str
    source_aged: str | None
    source_modulus: str
    note: str


@dataclass(frozen=True)
class PipeSize:
    """One standard pipe size: outside diameter, wall and inside diameter in [m]."""

    standard: str
    nominal: str
    klass: str
    OD: float
    wall: float
    ID: float
    source: str
    pressure_class: str | None
    #: The standard's minimum wall [m] where ``wall`` is the mean wall from the tolerance (plastics).
    wall_min: float | None = None


def wall_tolerance_grade_v(e_min: float) -> float:
    """Largest wall allowed by ISO 11922-1 grade V [m]: e_min + (0.1 e_min + 0.1 mm), the tolerance rounded up to 0.1 mm.

    >>> round(wall_tolerance_grade_v(0.0100) * 1e3, 6), round(wall_tolerance_grade_v(0.0082) * 1e3, 6)
    (11.1, 9.2)
    """
    tol_tenths = math.ceil(round((0.1 * e_min * 1e3 + 0.1) * 10.0, 9))
    return e_min + tol_tenths / 10.0 * MM


@dataclass(frozen=True)
class FittingType:
    """A named fitting: its loss model ('k', '2k' or '3k'), constants and source."""

    key: str
    name: str
    model: str
    params: Mapping[str, float]
    source: str
    note: str


# ---------------------------------------------------------------------------
# Loading (once, at import). Bad data fails here, loudly, rather than in a solve.

def _read(name: str) -> dict:
    return json.loads(resources.files("calc.data").joinpath(name).read_text(encoding="utf-8"))


def _cite(sources: dict, key: str | None, detail: str | None, where: str) -> str | None:
    if key is None:
        return None
    if key not in sources:
        raise ValueError(f"{where}: source key {key!r} is not in the file's sources map")
    return f"{sources[key]} [{detail}]" if detail else sources[key]


def _load_materials() -> dict[str, Material]:
    data = _read("materials.json")
    src = data["sources"]
    out: dict[str, Material] = {}
    for m in data["materials"]:
        where = f"materials.json {m['key']}"
        aged = m.get("eps_aged_mm")
        out[m["key"]] = Material(
            key=m["key"],
            name=m["name"],
            eps_new=m["eps_new_mm"] * MM,
            eps_aged=None if aged is None else aged * MM,
            E=m["E_GPa"] * GPA,
            nu_poisson=float(m["nu_poisson"]),
            source_roughness=_cite(src, m["roughness_source"], m.get("roughness_detail"), where),
            source_aged=_cite(src, m.get("aged_source"), m.get("aged_detail"), where),
            source_modulus=_cite(src, m["modulus_source"], m.get("modulus_detail"), where),
            note=m.get("note", ""),
        )
    return out


def _load_fittings() -> dict[str, FittingType]:
    data = _read("fittings.json")
    src = data["sources"]
    out: dict[str, FittingType] = {}
    for f in data["fittings"]:
        where = f"fittings.json {f['key']}"
        model = f["model"]
        if set(f["params"]) != set(_PARAMS[model]):
            raise ValueError(f"{where}: model {model!r} needs parameters {_PARAMS[model]}")
        out[f["key"]] = FittingType(
            key=f["key"],
            name=f["name"],
            model=model,
            params={k: float(v) for k, v in f["params"].items()},
            source=_cite(src, f["source"], f.get("source_detail"), where),
            note=f.get("note", ""),
        )
    return out


def _load_sizes(name: str) -> tuple[str, dict[tuple[str, str], PipeSize], list[str], list[str]]:
    data = _read(name)
    _SIZE_MATERIAL[data["standard"]] = data["material"]
    std = data["standard"]
    src = data["sources"]
    classes = data["classes"]
    tol = data.get("wall_tolerance")
    if tol and tol.get("grade") != "V":
        raise ValueError(f"{name}: only the grade V wall tolerance is known here")
    # Cited as a reference of its own (the record splits a source string at '.; ').
    tolerance = ("; " + _cite(src, tol["source"], None, name)) if tol else ""
    table: dict[tuple[str, str], PipeSize] = {}
    nominals: list[str] = []
    for row in data["sizes"]:
        keys = row["source"] if isinstance(row["source"], list) else [row["source"]]
        citation = "; ".join(_cite(src, k, None, f"{name} {row['nominal']}") for k in keys)
        nominals.append(row["nominal"])
        for klass, wall_mm in row["wall_mm"].items():
            if klass not in classes:
                raise ValueError(f"{name} {row['nominal']}: class {klass!r} is not in the classes map")
            info = classes[klass]
            pressure = info.get("pressure_class") if isinstance(info, dict) else None
            OD = row["OD_mm"] * MM
            wall = wall_mm * MM
            wall_min = None
            if tolerance:
                # The real wall lies between e_min and e_max: the mean gives the bore that carries the flow.
                wall_min, wall = wall, (wall + wall_tolerance_grade_v(wall)) / 2.0
            table[(row["nominal"], klass)] = PipeSize(
                standard=std, nominal=row["nominal"], klass=klass, OD=OD, wall=wall,
                ID=OD - 2.0 * wall, source=citation + tolerance, pressure_class=pressure, wall_min=wall_min,
            )
    return data["name"], table, nominals, list(classes)


_PARAMS = {"k": ("K",), "2k": ("K1", "Kinf"), "3k": ("K1", "Ki", "Kd"), "cone": ("angle_deg",)}

_MATERIALS = _load_materials()
#: The material each size table's pipe is made of (its roughness, modulus and Poisson ratio).
_SIZE_MATERIAL: dict[str, str] = {}
_FITTINGS = _load_fittings()
_SIZES: dict[str, tuple[str, dict[tuple[str, str], PipeSize], list[str], list[str]]] = {}
for _file in ("sizes_asme_b36_10m.json", "sizes_pe_iso4427.json"):
    _loaded = _load_sizes(_file)
    _SIZES[next(iter(_loaded[1].values())).standard] = _loaded

# Darby's Dn is a nominal size; a pipe run gives an inside diameter. Map one to the
# other along Schedule 40 steel, the pipe his constants are tabulated for.
def _schedule40() -> tuple[list[float], list[float]]:
    table = _SIZES["asme-b36.10m"][1]
    pairs = sorted(
        (table[(row["nominal"], "40")].ID, float(row["nps_in"]))
        for row in _read("sizes_asme_b36_10m.json")["sizes"]
        if (row["nominal"], "40") in table
    )
    return [d for d, _ in pairs], [n for _, n in pairs]


_S40_ID, _S40_NPS = _schedule40()
#: Where the Schedule 40 bores behind Darby's nominal size come from.
S40_SOURCE = _read("sizes_asme_b36_10m.json")["sources"]["asme-b36.10m-2004"]


# ---------------------------------------------------------------------------
# Lookups

def _unknown(what: str, key: object, valid) -> LookupError:
    return LookupError(f"unknown {what} {key!r}; valid: {', '.join(valid)}")


def material(key: str) -> Material:
    """The material with ``key``; LookupError listing the valid keys if there is none.

    >>> m = material("steel-commercial"); round(m.eps_new * 1e3, 3), m.E / 1e9
    (0.045, 207.0)
    """
    try:
        return _MATERIALS[key]
    except (KeyError, TypeError):
        raise _unknown("material", key, _MATERIALS) from None


def materials() -> list[Material]:
    """All materials, in display order (the order of the data file)."""
    return list(_MATERIALS.values())


def fitting(key: str) -> FittingType:
    """The fitting with ``key``; LookupError listing the valid keys if there is none.

    >>> fitting("valve-globe-open").params["K1"]
    1500.0
    """
    try:
        return _FITTINGS[key]
    except (KeyError, TypeError):
        raise _unknown("fitting", key, _FITTINGS) from None


def fittings() -> list[FittingType]:
    """All named fittings, in display order (the order of the data file)."""
    return list(_FITTINGS.values())


def size_standards() -> dict[str, str]:
    """Size standards offered: key -> display name."""
    return {key: entry[0] for key, entry in _SIZES.items()}


def _standard(standard: str):
    try:
        return _SIZES[standard]
    except (KeyError, TypeError):
        raise _unknown("size standard", standard, _SIZES) from None


def size_material(standard: str) -> Material:
    """The material a size table's pipe is made of, e.g. commercial steel for ASME B36.10M.

    >>> size_material("pe-iso4427").key
    'pe100'
    """
    _standard(standard)
    return material(_SIZE_MATERIAL[standard])


def size_options(standard: str) -> tuple[list[str], list[str]]:
    """Nominal sizes (ascending) and classes (schedules or SDRs) of ``standard``, for drop-downs.

    >>> noms, classes = size_options("pe-iso4427"); noms[:3], "SDR11" in classes
    (['20', '25', '32'], True)
    """
    _, _, nominals, classes = _standard(standard)
    return list(nominals), list(classes)


_FRACTION = re.compile(r"^(?:(\d+)[ -])?(\d+)/(\d+)$")


def _nominal_value(text: str) -> float | None:
    """Numeric value of a nominal such as '1-1/2', '1 1/2', '1.5' or '110'."""
    m = _FRACTION.match(text)
    if m:
        whole, num, den = m.groups()
        return (int(whole) if whole else 0) + int(num) / int(den) if int(den) else None
    try:
        return float(text)
    except ValueError:
        return None


def _canonical_nominal(standard: str, nominal: object) -> str | None:
    if not isinstance(nominal, (str, int, float)) or isinstance(nominal, bool):
        return None
    text = str(nominal).strip().lower()
    # Forgive the unit people type after a nominal size: NPS in inches, PE in millimetres.
    text = re.sub(r'\s*(?:"|in|inch|inches|mm|nps|dn)\s*$', "", text)
    text = re.sub(r"^(?:nps|dn)\s*", "", text)
    _, _, nominals, _ = _SIZES[standard]
    if text in nominals:
        return text
    value = _nominal_value(text)
    if value is None:
        return None
    for n in nominals:
        if _nominal_value(n) == value:
            return n
    return None


def _canonical_class(standard: str, klass: object) -> str | None:
    if not isinstance(klass, (str, int, float)) or isinstance(klass, bool):
        return None
    text = re.sub(r"\s+", "", str(klass)).upper()
    text = re.sub(r"^(?:SCHEDULE|SCH\.?|S)(?=\d)", "", text)
    _, _, _, classes = _SIZES[standard]
    for c in classes:
        if text in (c.upper(), c.upper().removeprefix("SDR")):
            return c
    return None


def pipe_size(standard: str, nominal: str, klass: str) -> PipeSize:
    """The size ``nominal`` in class ``klass`` of ``standard``.

    Forgiving about spelling ('1.5' or '1 1/2' for '1-1/2', 'Sch 40' for '40', '11' or
    'sdr11' for 'SDR11', '110 mm'); LookupError naming what exists otherwise.

    >>> p = pipe_size("asme-b36.10m", "2", "40"); round(p.ID * 1e3, 2)
    52.48
    >>> p = pipe_size("pe-iso4427", "110", "SDR11"); round(p.wall_min * 1e3, 2), round(p.wall * 1e3, 2), p.pressure_class
    (10.0, 10.55, 'PN16')
    """
    name, table, nominals, classes = _standard(standard)
    nom = _canonical_nominal(standard, nominal)
    if nom is None:
        raise LookupError(f"{name}: no nominal size {nominal!r}; sizes: {', '.join(nominals)}")
    kl = _canonical_class(standard, klass)
    if kl is None:
        raise LookupError(f"{name}: no class {klass!r}; classes: {', '.join(classes)}")
    try:
        return table[(nom, kl)]
    except KeyError:
        have = [c for c in classes if (nom, c) in table]
        raise LookupError(
            f"{name}: size {nom} is not made in class {kl}; classes for {nom}: {', '.join(have)}"
        ) from None


def sizes_in_order(standard: str, klass: str) -> list[PipeSize]:
    """Every size of ``standard`` in class ``klass``, by ascending inside diameter.

    >>> [p.nominal for p in sizes_in_order("asme-b36.10m", "40")][:4]
    ['1/2', '3/4', '1', '1-1/4']
    """
    name, table, _, classes = _standard(standard)
    kl = _canonical_class(standard, klass)
    if kl is None:
        raise LookupError(f"{name}: no class {klass!r}; classes: {', '.join(classes)}")
    return sorted((p for (_, c), p in table.items() if c == kl), key=lambda p: p.ID)


# ---------------------------------------------------------------------------
# Loss coefficients

def _check_positive(name: str, value: float) -> float:
    value = float(value)
    if not (math.isfinite(value) and value > 0.0):
        raise InputError(name, value, "must be a positive finite number")
    return value


def k_hooper_1981(K1: float, Kinf: float, Re: float, D: float) -> float:
    """Loss coefficient of a fitting by the 2-K method of Hooper (1981).

    K = K1 / Re + Kinf (1 + 1 / D_in), with D_in the inside diameter in inches.

    Parameters: K1 [-], Kinf [-], Re Reynolds number in the pipe [-], D inside
    diameter [m] (converted to inches, 25.4 mm). K applies to the velocity in that pipe.

    Validity: laminar and turbulent flow. Hooper's data were for ordinary
    process-plant sizes; in large pipes the 1/D term vanishes and K tends to Kinf,
    which Darby's 3-K method represents better (Darby 2001).

    Reference: Hooper, W. B. (1981). The two-K method predicts head losses in pipe
    fittings. Chemical Engineering 88(17): 96-100.

    Globe valve (K1 = 1500, Kinf = 4) in a 2 in bore at Re = 1e4:

    >>> round(k_hooper_1981(1500, 4, 1e4, 2 * 0.0254), 4)
    6.15
    """
    Re = _check_positive("Re", Re)
    D = _check_positive("D", D)
    return K1 / Re + Kinf * (1.0 + 1.0 / (D / INCH))


def k_darby_2001(K1: float, Ki: float, Kd: float, Re: float, D: float) -> float:
    """Loss coefficient of a fitting by the 3-K method of Darby (2001).

    K = K1 / Re + Ki (1 + Kd / Dn^0.3), with Dn the nominal size in inches.

    Parameters: K1 [-], Ki [-], Kd [in^0.3], Re Reynolds number in the pipe [-],
    D the *nominal* diameter [m] (NPS x 25.4 mm; converted to inches). Given only an
    inside diameter, use :func:`darby_nominal_size` (as :func:`fitting_K` does).
    K applies to the velocity in the pipe.

    Validity: laminar and turbulent flow and all sizes, as Darby presents it;
    his constants are tabulated per fitting for full-bore, fully open valves.

    Reference: Darby, R. (2001). Chemical Engineering Fluid Mechanics, 2nd ed.,
    Marcel Dekker, New York, table of 3-K constants.

    K1 = 950, Ki = 0.25, Kd = 4 in NPS 12 at Re = 1e4:

    >>> round(k_darby_2001(950, 0.25, 4, 1e4, 12 * 0.0254), 4)
    0.8195
    """
    Re = _check_positive("Re", Re)
    D = _check_positive("D", D)
    return K1 / Re + Ki * (1.0 + Kd / (D / INCH) ** 0.3)


def darby_nominal_size(D: float) -> float:
    """Nominal size [m] for Darby's 3-K method from an inside diameter D [m].

    Interpolated linearly along Schedule 40 steel (ASME B36.10M, NPS 1/2 to 24),
    extrapolated along the last segment above NPS 24, and scaled in proportion to
    D below NPS 1/2 (so it stays positive). Any pipe, steel or not, is given the
    nominal size of the Schedule 40 steel pipe of the same bore.

    >>> round(darby_nominal_size(0.05248) / 0.0254, 6)
    2.0
    """
    return darby_nominal_bracket(D)["nps"] * INCH


def darby_nominal_bracket(D: float) -> dict:
    """How :func:`darby_nominal_size` finds its size, for the record's working: the Schedule 40 bores
    ``D0``, ``D1`` [m] and their sizes ``nps0``, ``nps1`` [in] it interpolates between (``nps0`` and ``D0``
    0 below NPS 1/2, where it scales in proportion), and the size ``nps`` [in].

    >>> b = darby_nominal_bracket(0.06)
    >>> b["nps0"], b["nps1"], round(b["nps"], 4)
    (2.0, 2.5, 2.3686)
    """
    D = _check_positive("D", D)
    if D <= _S40_ID[0]:
        x0, x1, y0, y1 = 0.0, _S40_ID[0], 0.0, _S40_NPS[0]
    else:
        i = min(bisect.bisect_left(_S40_ID, D), len(_S40_ID) - 1)
        x0, x1, y0, y1 = _S40_ID[i - 1], _S40_ID[i], _S40_NPS[i - 1], _S40_NPS[i]
    return {"D0": x0, "D1": x1, "nps0": float(y0), "nps1": float(y1), "nps": y0 + (y1 - y0) * (D - x0) / (x1 - x0)}


def k_coefficients(model: str, params: Mapping, D: float) -> tuple[float, float]:
    """(a, b) such that K = a / Re + b, for a fitting in a pipe of inside diameter D [m].

    Plain K, Hooper's 2-K and Darby's 3-K all have this form once the size is fixed, so a
    run's whole set of fittings reduces to two numbers and the solver need not call
    :func:`fitting_K` for every flow it tries.

    >>> a, b = k_coefficients("3k", {"K1": 950, "Ki": 0.25, "Kd": 4}, 0.30318)
    >>> round(a / 1e4 + b, 4) == round(fitting_K({"type": "3k", "K1": 950, "Ki": 0.25, "Kd": 4}, 1e4, 0.30318), 4)
    True
    """
    D = _check_positive("D", D)
    if model == "k":
        return 0.0, float(params["K"])
    if model == "2k":
        return float(params["K1"]), float(params["Kinf"]) * (1.0 + 1.0 / (D / INCH))
    if model == "3k":
        Dn = darby_nominal_size(D)
        return float(params["K1"]), float(params["Ki"]) * (1.0 + float(params["Kd"]) / (Dn / INCH) ** 0.3)
    if model == "cone":
        raise InputError("fitting.model", model, "a cone's K depends on the bores on both sides: see calc.model.implied")
    raise InputError("fitting.model", model, "must be 'k', '2k' or '3k'")


def transition_K(beta: float, angle_deg: float, expanding: bool) -> float:
    """Loss coefficient of a change of bore on the small pipe's velocity head [-] (Crane TP-410M, p. A-26).

    beta = d/D, the small bore over the large [-]; angle_deg the included angle of the cone [°]
    (180 for a sudden change). Contraction: 0.8 sin(θ/2)(1 - β²) up to 45°, else
    0.5 (1 - β²) sqrt(sin(θ/2)); enlargement: 2.6 sin(θ/2)(1 - β²)² up to 45°, else (1 - β²)²,
    which at 180° is the Borda–Carnot loss of a sudden expansion.

    >>> transition_K(0.5, 180.0, True), transition_K(0.5, 180.0, False)
    (0.5625, 0.375)
    >>> round(transition_K(0.5, 30.0, False), 4)
    0.1553
    """
    if not 0.0 < beta <= 1.0:
        raise ValueError(f"beta must lie in (0, 1], got {beta!r}")
    half = math.radians(angle_deg) / 2.0
    one = 1.0 - beta * beta
    if expanding:
        return 2.6 * math.sin(half) * one * one if angle_deg <= 45.0 else one * one
    return 0.8 * math.sin(half) * one if angle_deg <= 45.0 else 0.5 * one * math.sqrt(math.sin(half))


def _number(params: Mapping, name: str, path: str) -> float:
    if name not in params:
        raise InputError(f"{path}.{name}", None, "is missing")
    value = params[name]
    try:
        out = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{path}.{name}", value, "must be a number") from None
    if not math.isfinite(out) or out < 0.0:
        raise InputError(f"{path}.{name}", value, "must be a finite number, zero or more")
    return out


def fitting_K(ft: FittingType | Mapping, Re: float, D: float) -> float:
    """Loss coefficient K [-] of a fitting at Reynolds number Re [-] in a pipe of inside diameter D [m].

    ``ft`` is a :class:`FittingType` or a mapping: either ``{"type": "<table key>"}``
    or a model with its constants, ``{"model" (or "type"): "k" | "2k" | "3k", "K": ...}``,
    ``{..., "K1": ..., "Kinf": ...}``, ``{..., "K1": ..., "Ki": ..., "Kd": ...}``
    (constants at the top level or under ``"params"``). Dispatches to
    :func:`k_hooper_1981` (with D) or :func:`k_darby_2001` (with the nominal size
    :func:`darby_nominal_size` of D). K applies to the velocity in the pipe.

    Globe valve, 3-K, in NPS 2 Schedule 40 (bore 52.48 mm) at Re = 1e4:

    >>> round(fitting_K(fitting("valve-globe-open"), 1e4, 0.05248), 4)
    6.821
    >>> fitting_K({"type": "k", "K": 0.3}, 1e5, 0.1)
    0.3
    """
    if isinstance(ft, FittingType):
        model, params, path = ft.model, ft.params, f"fitting {ft.key}"
    elif isinstance(ft, Mapping):
        model = ft.get("model", ft.get("type"))
        path = "fitting"
        if isinstance(model, str) and model.lower() not in _PARAMS:
            f = fitting(model)
            model, params, path = f.model, f.params, f"fitting {f.key}"
        else:
            params = ft.get("params", ft)
    else:
        raise InputError("fitting", ft, "must be a fitting from the table or a mapping of its constants")
    if not isinstance(model, str) or model.lower() not in _PARAMS:
        raise InputError(f"{path}.model", model, "must be 'k', '2k', '3k' or a fitting key")
    model = model.lower()
    values = [_number(params, name, path) for name in _PARAMS[model]]
    if model == "k":
        return values[0]
    if model == "2k":
        return k_hooper_1981(*values, Re, D)
    return k_darby_2001(*values, Re, darby_nominal_size(D))
