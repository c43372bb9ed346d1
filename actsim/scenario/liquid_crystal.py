"""Reading the liquid-crystal parts of a scenario: a material's ``[materials.NAME.liquid_crystal]`` table,
a layer's ``director`` and a source's ``polarisation``.

Every number is checked against :data:`actsim.scenario.limits.LIMITS` when read; the combinations the
order-parameter model does not cover (a light-formed second network, a relaxing or large-strain primary
network) are refused here as one line.
"""

from __future__ import annotations

import math

from ..errors import ActsimInputError
from ..schema import Table
from .limits import limit
from .model import Director, LiquidCrystal

#: Director profiles through a layer's thickness (see actsim.order.director_profile).
DIRECTOR_KINDS = ("planar", "homeotropic", "splay", "twisted", "hybrid", "table", "polydomain")
#: Most orientation families of a polydomain layer.
MAX_FAMILIES = 36
#: Most rows of a director table.
MAX_DIRECTOR_ROWS = 1000


def parse_liquid_crystal(t: Table, name: str, *, has_chromophore: bool, strain_law: str, relaxation,
                         network_modulus: float) -> LiquidCrystal | None:
    """The optional ``liquid_crystal`` table of material ``name`` (None when absent)."""
    if not t.has("liquid_crystal"):
        return None
    where = f"materials.{name}.liquid_crystal"
    if strain_law != "linear":
        raise ActsimInputError(f"{where}: a '{strain_law}' layer with nematic order is not modelled; the order "
                               "strain enters the small-strain section (use strain_law = 'linear')")
    if relaxation is not None:
        raise ActsimInputError(f"{where}: a relaxing liquid-crystal network is not modelled (remove relaxation "
                               "or liquid_crystal)")
    if network_modulus > 0:
        raise ActsimInputError(f"{where}: a light-formed second network with nematic order is not modelled "
                               "(remove network_modulus or liquid_crystal)")
    g = t.table("liquid_crystal")

    def lim(key):
        return limit(f"materials.NAME.liquid_crystal.{key}")

    network = g.string("network", default="glassy", choices=("glassy", "elastomer"))
    law = g.string("order_law", default="maier-saupe", choices=("maier-saupe", "haller"))
    t_ni = g.quantity("clearing_temperature", "temperature", **lim("clearing_temperature"))
    shift = g.quantity("clearing_shift", "temperature_difference", default="0 K", **lim("clearing_shift"))
    if shift > t_ni - 1.0:
        raise ActsimInputError(f"{g.field_path('clearing_shift')}: {shift:g} K would bring the clearing temperature "
                               f"below 1 K at full conversion (allowed <= {t_ni - 1.0:g} K, the clearing temperature "
                               "less 1 K)")
    exponent = g.number("haller_exponent", default=0.2, **lim("haller_exponent"))
    if law != "haller" and g.has("haller_exponent"):
        raise ActsimInputError(f"{g.field_path('haller_exponent')}: used only with order_law = 'haller' "
                               f"(here '{law}')")
    t_prep = g.quantity("preparation_temperature", "temperature", default="20 degC", **lim("preparation_temperature"))
    if t_prep >= t_ni:
        raise ActsimInputError(f"{g.field_path('preparation_temperature')}: {t_prep:g} K is not below the clearing "
                               f"temperature {t_ni:g} K (the network is made in the nematic phase)")
    if network == "glassy":
        c_par = g.number("strain_per_order", **lim("strain_per_order"))
        c_perp = g.number("strain_across_per_order", default=-0.5 * c_par, **lim("strain_across_per_order"))
    else:
        for key in ("strain_per_order", "strain_across_per_order"):
            if g.has(key):
                raise ActsimInputError(f"{g.field_path(key)}: an elastomer's strain follows from its order "
                                       "(Warner–Terentjev step lengths); used only with network = 'glassy'")
        c_par = c_perp = 0.0
    kw = dict(
        birefringence=g.number("birefringence", default=0.0, **lim("birefringence")),
        reactant_order=g.number("reactant_order", default=1.0, **lim("reactant_order")),
        product_order=g.number("product_order", default=0.0, **lim("product_order")),
        absorption_ratio_reactant=g.number("absorption_ratio_reactant", default=0.0,
                                           **lim("absorption_ratio_reactant")),
        absorption_ratio_product=g.number("absorption_ratio_product", default=0.0, **lim("absorption_ratio_product")),
    )
    if not has_chromophore:
        for key in ("reactant_order", "product_order", "absorption_ratio_reactant", "absorption_ratio_product"):
            if g.has(key):
                raise ActsimInputError(f"{g.field_path(key)}: given but the material has no chromophore "
                                       "(chromophore_concentration = 0)")
    g.finish()
    return LiquidCrystal(network=network, order_law=law, clearing_temperature=t_ni, clearing_shift=shift,
                         haller_exponent=exponent, preparation_temperature=t_prep, strain_per_order=c_par,
                         strain_across_per_order=c_perp, **kw)


def parse_director(lt: Table, i: int, *, liquid_crystal: bool, cells: int = 0) -> Director | None:
    """The optional ``director`` of layer ``i`` (an inline table); None when absent."""
    if not lt.has("director"):
        return None
    if not liquid_crystal:
        raise ActsimInputError(f"layers[{i}].director: given but the layer's material has no liquid_crystal table")
    raw = lt.raw("director")
    if isinstance(raw, str):
        raw = {"kind": raw}
    d = Table(raw, f"layers[{i}].director")
    kind = d.string("kind", choices=DIRECTOR_KINDS)
    ang = limit("layers[].director.angle")
    tilt = limit("layers[].director.tilt")
    kw = {"kind": kind}
    allowed = {"planar": ("angle",), "homeotropic": (), "splay": ("angle", "tilt_bottom", "tilt_top"),
               "twisted": ("angle", "angle_top"), "hybrid": ("angle", "angle_top", "tilt_bottom", "tilt_top"),
               "table": ("rows",), "polydomain": ("families",)}[kind]
    for key in ("angle", "angle_top", "tilt_bottom", "tilt_top", "rows", "families"):
        if d.has(key) and key not in allowed:
            raise ActsimInputError(f"{d.field_path(key)}: not used with kind = '{kind}' (it takes "
                                   f"{', '.join(allowed) or 'no angles'})")
    if "angle" in allowed:
        kw["angle"] = d.quantity("angle", "angle", default="0 deg", **ang)
    if kind in ("twisted", "hybrid"):
        kw["angle_top"] = d.quantity("angle_top", "angle", **ang)
    else:
        kw["angle_top"] = kw.get("angle", 0.0)
    if kind == "homeotropic":
        kw["tilt_bottom"] = kw["tilt_top"] = math.pi / 2
    elif kind in ("splay", "hybrid"):
        kw["tilt_bottom"] = d.quantity("tilt_bottom", "angle", default="0 deg", **tilt)
        kw["tilt_top"] = d.quantity("tilt_top", "angle", default="90 deg", **tilt)
    if kind == "polydomain":
        k = d.integer("families", default=6, lo=2, hi=MAX_FAMILIES)
        if cells % k:
            raise ActsimInputError(f"layers[{i}].cells: {cells} cells is not a multiple of the {k} domain families "
                                   f"of the polydomain director (use a multiple of {k}, at least {2 * k})")
        if cells < 2 * k:
            raise ActsimInputError(f"layers[{i}].cells: {cells} cells is fewer than two slabs of the {k} domain "
                                   f"families (allowed >= {2 * k})")
        kw["families"] = k
    if kind == "table":
        rows = d.raw("rows")
        where = d.field_path("rows")
        if not isinstance(rows, list) or len(rows) < 2:
            raise ActsimInputError(f"{where}: give at least two rows [height, \"angle\", \"tilt\"], height from 0 "
                                   "(bottom face) to 1 (top face)")
        if len(rows) > MAX_DIRECTOR_ROWS:
            raise ActsimInputError(f"{where}: {len(rows)} rows is too many (allowed <= {MAX_DIRECTOR_ROWS})")
        table = []
        for k, row in enumerate(rows):
            if not isinstance(row, list) or len(row) != 3:
                raise ActsimInputError(f"{where}[{k}]: give [height, \"angle\", \"tilt\"] (three entries)")
            r = Table({"height": row[0], "angle": row[1], "tilt": row[2]}, f"{where}[{k}]")
            h = r.number("height", **limit("layers[].director.table.height"))
            table.append((h, r.quantity("angle", "angle", **ang), r.quantity("tilt", "angle", **tilt)))
        hs = [row[0] for row in table]
        if any(b <= a for a, b in zip(hs, hs[1:])):
            raise ActsimInputError(f"{where}: heights must increase strictly from row to row (0 bottom to 1 top)")
        kw["table"] = tuple(table)
    d.finish()
    return Director(**kw)


def parse_polarisation(t: Table) -> float | None:
    """A source's ``polarisation``: "unpolarised" (default) or the electric field's angle from the strip axis."""
    if not t.has("polarisation"):
        return None
    raw = t.raw("polarisation")
    if isinstance(raw, str) and raw.strip().lower() in ("unpolarised", "unpolarized"):
        return None
    return t.quantity("polarisation", "angle", **limit("sources[].polarisation"))
