"""Reading a case: TOML text or a dict into a validated :class:`fdtd_cases.case.Case`.

Every problem pydantic finds becomes one line naming the source, the dotted
key and what is allowed (:class:`fdtd_cases.errors.CaseError`).
"""

import math
import tomllib
from pathlib import Path
from typing import get_args, get_origin

from pydantic import BaseModel, ValidationError

from .case import Case, Flat, Grating, Profile, Random, Sine, Triangle
from .errors import CaseError, did_you_mean


def _table_class(loc):
    """The model class that owns the key at ``loc`` (for listing allowed keys)."""
    cls = Case
    for part in loc[:-1]:
        if isinstance(part, int):
            continue  # an entry of an array of tables, such as [[film]]
        field = cls.model_fields.get(part)
        if field is None:
            return None
        annotation = field.annotation
        if get_origin(annotation) is list:
            annotation = get_args(annotation)[0]
        if isinstance(annotation, type) and issubclass(annotation, BaseModel):
            cls = annotation
        else:
            return None
    return cls


def _describe(error, surface_pattern):
    """Turn one pydantic error into (key path, message)."""
    loc = [part for part in error["loc"]]
    # Drop the tag pydantic inserts for the surface union, e.g. ("surface", "grating", "period").
    if len(loc) >= 2 and loc[0] == "surface" and loc[1] in ("flat", "grating", "triangle", "sine", "random", "profile"):
        loc = [loc[0]] + loc[2:]
    key = ""
    for part in loc:
        key += f"[{part}]" if isinstance(part, int) else (f".{part}" if key else str(part))
    kind = error["type"]
    if kind == "extra_forbidden":
        if loc[0] == "surface" and surface_pattern:
            cls = {"flat": Flat, "grating": Grating, "triangle": Triangle, "sine": Sine,
                   "random": Random, "profile": Profile}[surface_pattern]
        else:
            cls = _table_class(loc)
        if cls is None:
            return key, "unknown key"
        allowed = list(cls.model_fields)
        return key, f"unknown key; {did_you_mean(loc[-1], allowed)}allowed here: {', '.join(allowed)}"
    if kind == "missing":
        return key, "required key is missing"
    if kind == "union_tag_invalid" or kind == "union_tag_not_found":
        return "surface.pattern", ('must be one of "flat", "grating", "triangle", "sine", '
                                   '"random", "profile"')
    message = error["msg"]
    if message.startswith("Value error, "):
        message = message[len("Value error, "):]
    if kind.endswith("_type"):
        message = f"{message} (got {type(error.get('input')).__name__} {error.get('input')!r})"
    return key, message


WAVELENGTH_RANGE = (0.1, 20.0)
"""Vacuum wavelengths a case may give, µm: deep ultraviolet to the mid-infrared. Outside it a
number is far likelier a unit slip (450 for 450 nm, 4.5e-7 for metres) than a real light source."""

PROPORTION = (1e-3, 5e3)
"""Lengths a case may give, in centre wavelengths: a thousandth (0.45 nm at 450 nm) to five
thousand (2.25 mm at 450 nm, beyond the thickest chips of 50-500 µm). Outside it the length was
almost surely written in another unit."""


def _lengths(case):
    """(dotted key, value) of every length a case gives, µm (the chip's back side only when finite)."""
    out = [("emitter.depth", case.emitter.depth)]
    out += [(f"emitter.x[{i}]", abs(x)) for i, x in enumerate(case.emitter.x) if x != 0]
    out += [(f"film[{i}].thickness", film.thickness) for i, film in enumerate(case.film)]
    if math.isfinite(case.chip.thickness):
        out.append(("chip.thickness", case.chip.thickness))
    for name in ("period", "height", "rms", "correlation"):
        if getattr(case.surface, name, None) is not None:
            out.append((f"surface.{name}", getattr(case.surface, name)))
    for name in ("emitter.contour", "grid.width", "grid.pml"):
        table, key = name.split(".")
        if getattr(getattr(case, table), key) is not None:
            out.append((name, getattr(getattr(case, table), key)))
    return out


def _check_units(case, source):
    """Refuse wavelengths and lengths that look like a unit slip (the case file is in µm)."""
    lam = case.light.wavelength
    low, high = WAVELENGTH_RANGE
    if lam > high:
        raise CaseError(source, "light.wavelength", f"is {lam:g}; case files are in µm, and this looks like "
                        f"nanometres ({lam:g} nm would be wavelength = {lam / 1000:g}); wavelengths from {low:g} "
                        f"to {high:g} µm are accepted")
    if lam < low:
        raise CaseError(source, "light.wavelength", f"is {lam:g}; case files are in µm, and this looks like "
                        f"metres or millimetres; wavelengths from {low:g} to {high:g} µm are accepted")
    small, large = PROPORTION
    for key, value in _lengths(case):
        if value > large * lam:
            raise CaseError(source, key, f"is {value:g} µm, {value / lam:.3g} wavelengths (light.wavelength = "
                            f"{lam:g} µm); case files are in µm, and this looks like nanometres ({value:g} nm "
                            f"would be {value / 1000:g}); lengths up to {large:g} wavelengths are accepted")
        if value < small * lam:
            raise CaseError(source, key, f"is {value:g} µm, {value / lam:.3g} wavelengths (light.wavelength = "
                            f"{lam:g} µm); case files are in µm, and this looks like metres or millimetres; "
                            f"lengths down to {small:g} wavelengths are accepted")


MAX_POSITIONS = 64
"""Most emitter positions a sampling table may ask for (each is one job per orientation)."""


def _sampled_positions(data, source):
    """``data`` with a sampling table in ``[emitter] x`` replaced by the positions it stands for.

    ``x = { across = "period", count = N }``: N positions i * period / N, i = 0 .. N-1, evenly over
    one period of a periodic pattern (grating, triangle, sine); for a smooth periodic dependence on
    x this is the trapezoid rule, exact for harmonics of the period below N.
    ``x = { span = W, count = N }``: N positions at the midpoints of N equal parts of [-W/2, W/2]
    (the midpoint rule), for any pattern. Other data is returned unchanged.
    """
    emitter = data.get("emitter") if isinstance(data, dict) else None
    spec = emitter.get("x") if isinstance(emitter, dict) else None
    if not isinstance(spec, dict):
        return data
    if set(spec) not in ({"across", "count"}, {"span", "count"}):
        raise CaseError(source, "emitter.x", 'a sampling table takes across = "period" and count, or span '
                        f"(µm) and count; got {', '.join(sorted(spec)) or 'nothing'}")
    count = spec["count"]
    if not isinstance(count, int) or isinstance(count, bool) or not 1 <= count <= MAX_POSITIONS:
        raise CaseError(source, "emitter.x.count", f"must be a whole number from 1 to {MAX_POSITIONS}, "
                        f"not {count!r}")
    if "across" in spec:
        surface = data.get("surface") if isinstance(data.get("surface"), dict) else {}
        period = surface.get("period")
        if spec["across"] != "period":
            raise CaseError(source, "emitter.x.across", f'must be "period", not {spec["across"]!r}')
        if surface.get("pattern") not in ("grating", "triangle", "sine") or not isinstance(period, (int, float)) \
                or isinstance(period, bool) or not period > 0:
            raise CaseError(source, "emitter.x.across", '"period" needs a periodic pattern (grating, triangle or '
                            "sine) with its period; for other surfaces give span = W (µm) and count")
        positions = [i * float(period) / count for i in range(count)]
    else:
        span = spec["span"]
        if not isinstance(span, (int, float)) or isinstance(span, bool) or not 0 < span < math.inf:
            raise CaseError(source, "emitter.x.span", f"must be a positive length in µm, not {span!r}")
        positions = [(-0.5 + (i + 0.5) / count) * span for i in range(count)]
    return {**data, "emitter": {**emitter, "x": positions}}


def parse_case(data, source="case"):
    """Validate a dict read from TOML into a :class:`Case`.

    Raises
    ------
    CaseError
        Naming the source, the key and what is allowed. All problems found are
        listed, one per line.
    """
    data = _sampled_positions(data, source)
    try:
        case = Case.model_validate(data)
    except ValidationError as exc:
        pattern = None
        if isinstance(data.get("surface"), dict):
            pattern = data["surface"].get("pattern")
        lines = [_describe(error, pattern) for error in exc.errors()]
        key, message = lines[0]
        if len(lines) > 1:
            rest = "\n".join(f"  {source}: {k}: {m}" for k, m in lines[1:])
            message = f"{message}\n{rest}"
        raise CaseError(source, key, message) from None
    _check_units(case, source)
    depth, thickness = case.emitter.depth, case.chip.thickness
    if depth >= thickness:
        raise CaseError(source, "emitter.depth", f"is {depth:g} µm, not inside the chip "
                        f"(chip.thickness = {thickness:g} µm)")
    if case.collection is not None and case.collection.na is not None and case.collection.na > case.ambient.index:
        raise CaseError(source, "collection.na", f"is {case.collection.na:g}, more than the ambient index "
                        f"{case.ambient.index:g} (na = n_ambient sin(half-angle))")
    return case


def load_case(path):
    """Read and validate a TOML case file.

    Returns
    -------
    case : Case
    text : str
        The file's text, kept with the results.
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise CaseError(path, "", "no such file") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise CaseError(path, "", f"cannot be read ({exc})") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise CaseError(path, "", f"is not valid TOML: {exc}") from None
    return parse_case(data, source=path), text


def resolved_dict(case):
    """The case with every default filled in, as plain TOML-ready data.

    Infinite thickness is kept as the float ``inf`` (valid TOML); absent
    optional values are left out.
    """
    return case.model_dump(exclude_none=True)
