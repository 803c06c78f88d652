"""What each layer (and block) is: wall linework, filled solid, door, label, or nothing.

Roles
-----
``wall``      linework the vehicle may not cross (a closed polyline stays linework).
``solid``     filled obstacles: closed outlines become polygons, loose lines that close
              faces are polygonised (columns drawn as four lines become squares).
``door``      door symbols: swing arcs and leaves are not obstacles (door open), each
              swing or door block becomes a :class:`~floorfit.plan.model.Doorway`; bare lines on
              a door layer without swings are openings.
``opening``   openings in walls (doors and windows together): swings are recognised as
              doors, every other line stays an obstacle (windows are glass).
``label``     texts; other entities on the layer are not obstacles.
``ignore``    not obstacles: dimensions, grids, hidden and overhead lines, floor finish.
``furniture`` decided per block / layer name: fixed fixtures (WC, sanitary, kitchen) are
              solid, movable seating is ignored, other furniture is solid.

Matching: layer and block names are matched case-insensitively with shell patterns
(``fnmatch``) after stripping a bound-xref prefix (``xref-NAME$0$A-WALL`` -> ``A-WALL``,
``NAME|A-WALL`` -> ``A-WALL``). The caller's patterns come first, then AIA / US National
CAD Standard names, ISO 13567-style element codes, and common words in several
languages. A layer matching nothing is ``wall`` (fallback) with an ``unknown-layer`` issue.
"""

from __future__ import annotations

import difflib
import fnmatch
import re
from collections.abc import Iterable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from floorfit.errors import SiteError
from floorfit.tomlcheck import read_toml

__all__ = [
    "LAYER_ROLES", "BLOCK_ROLES", "DEFAULT_LAYER_RULES", "DEFAULT_BLOCK_RULES", "FURNITURE_RULES",
    "RoleResolver", "strip_xref_prefix", "read_roles", "roles_from_site_table",
]

LAYER_ROLES = ("wall", "solid", "door", "opening", "label", "ignore", "furniture")
BLOCK_ROLES = ("wall", "solid", "door", "ignore", "furniture")

# (patterns, role, reason). First match wins. Patterns are lower-case shell patterns.
_AIA = "AIA/NCS layer name"
DEFAULT_LAYER_RULES: list[tuple[tuple[str, ...], str, str]] = [
    # annotation and views that are not floor obstacles
    (("defpoints", "*viewport*", "*view port*", "*vport*"), "ignore", "drawing aid"),
    (("a-anno-dims*", "*-dims*", "*dim*", "*尺寸*", "*标注*"), "ignore", "dimensions"),
    (("a-anno*", "a-text*", "*-iden*", "*-note*", "*text*", "*txt*", "*label*", "*anno*",
      "*note*", "*room name*", "*room number*", "*raumname*", "*文字*"), "label", "annotation / text"),
    (("a-grid*", "s-grid*", "*grid*", "a-axis*", "*axis*", "*轴*"), "ignore", "grid / axis lines"),
    (("a-elev*", "a-sect*", "a-detl*", "*elevation*", "*section*", "*detail*"), "ignore",
     "elevation / section / detail view (not plan)"),
    (("*hidden*", "*hid", "*ovhd*", "*overhead*", "*-abov*", "*above*", "*projection*",
      "a-roof*", "r-*", "*roof*", "*dach*", "a-header*", "*-header*", "s-foot*", "*footer*",
      "*footing*", "s-fndn*", "*foundation*", "*stem-wall*", "*stemwall*", "s-slab*", "*-slab*", "ff-*", "*joist*",
      "*truss*", "*canopy*", "a-flor-cano*", "a-flor-roof*"), "ignore",
     "hidden / overhead / below-floor linework"),
    (("a-flor-patt*", "a-flor-finish*", "a-flor-levl*", "a-flor-tile*", "*flooring*", "floor",
      "*floor finish*", "*boden*", "*bodenbelag*", "*pavimento*", "*revetement*",
      "*地面*", "*铺装*"), "ignore", "floor finish / tile grid"),
    (("*title*", "*border*", "*sheet*", "*frame-ttl*"), "ignore", "sheet / title block"),
    # doors and openings
    (("a-door*", "*-door*", "*door*", "*tuer*", "*tür*", "*tueren*", "*türen*", "*porte*",
      "*puerta*", "*porta*", "*门*", "*門*"), "door", "door layer"),
    (("a-opening*", "*-opng*", "*opening*", "*öffnung*", "*oeffnung*"), "opening", "openings in walls"),
    # fixed solids
    (("a-cols*", "s-cols*", "*-cols*", "*column*", "col", "cols", "*stuetze*", "*stütze*",
      "*colonne*", "*columna*", "*pilar*", "*pillar*", "*柱*"), "solid", "columns"),
    (("a-case*", "a-flor-case*", "*casework*", "a-eqpm*", "*-eqpm*", "*equipment*",
      "a-fixt*", "a-flor-fixt*", "p-fixt*", "*fixture*", "*-plmb-fixt*", "*sanitary*",
      "*rack*", "*regal*", "*shelv*", "*机柜*"), "solid", "fixed fixtures / equipment / racks"),
    # building services overlays: wiring, ducts, piping runs, lighting (not floor obstacles)
    (("e-*", "m-*", "*electrical*", "*elektr*", "*electric*", "*电气*", "*强电*", "*弱电*", "*hvac*",
      "*duct*", "*sprinkler*", "*lighting*", "*暖通*", "*给排水*"), "ignore",
     "building services overlay (wiring, ducts): not floor obstacles"),
    # furniture (policy by block / layer name)
    (("a-furn*", "i-furn*", "*-furn*", "*furn*", "f-fur*", "*möbel*", "*moebel*", "*mobilier*",
      "*mueble*", "*mobili*", "*家具*", "*chair*", "*seat*", "*stuhl*"), "furniture", "furniture"),
    # walls and everything that is a wall-like obstacle
    (("a-wall*", "s-wall*", "*-wall*", "*wall*", "*wand*", "*wände*", "*waende*", "mur", "murs",
      "*mur-*", "*-mur", "*muro*", "*parede*", "*墙*", "*牆*"), "wall", "walls"),
    (("a-glaz*", "a-wind*", "a-win", "a-win-*", "*window*", "*fenster*", "*fenetre*", "*fenêtre*",
      "*ventana*", "*glaz*", "*glass*", "*glas*", "*crystal*", "*cristal*", "*窗*"), "wall",
     "windows / glazing (glass is an obstacle)"),
    (("a-flor-strs*", "*stair*", "*treppe*", "*escal*", "*rolltreppe*", "*楼梯*", "a-flor-hral*",
      "*rail*", "*geländer*", "a-flor-evtr*", "*elev*", "*lift*", "*aufzug*", "a-flor*"), "wall",
     "stairs / rails / lifts / floor elements"),
    (("*hatch*", "*poche*"), "wall", "hatch layer (fills decided by pattern)"),
    # JuPedSim geometry convention (free-space polygon + obstacle polygons)
    (("jps-walkablearea*",), "wall", "JuPedSim walkable-area boundary"),
    (("jps-obstacle*",), "solid", "JuPedSim obstacles"),
    (("jps-*",), "ignore", "JuPedSim simulation annotation"),
]

# ISO 13567-style names: agent letter, optional separator, element code from CI/SfB
# table 1 (from memory: 21 external walls, 22 internal walls, 23 floors, 24 stairs,
# 27 roofs, 28 frame/columns, 31 external openings, 32 internal openings, 7x fittings,
# 74 sanitary, 8x loose furniture).
_ISO_RE = re.compile(r"^[a-z][-_]?(\d\d)[-_a-z0-9]{0,10}$")
_ISO_CODES: dict[str, tuple[str, str]] = {
    "21": ("wall", "external walls"), "22": ("wall", "internal walls"), "23": ("ignore", "floors"),
    "24": ("wall", "stairs / ramps"), "27": ("ignore", "roofs"), "28": ("solid", "frame / columns"),
    "31": ("opening", "external wall openings"), "32": ("opening", "internal wall openings"),
    "37": ("ignore", "roof openings"), "73": ("solid", "culinary fittings"),
    "74": ("solid", "sanitary fittings"), "76": ("solid", "storage fittings"),
    "82": ("furniture", "loose furniture"),
}

# Block names. Door blocks: DOOR*, *DOOR*, D90..., door-library blocks.
DEFAULT_BLOCK_RULES: list[tuple[tuple[str, ...], str, str]] = [
    (("*door*", "d[0-9][0-9]*", "$dorlib*", "*dorlib*", "*tuer*", "*tür*", "*porte*", "*puerta*",
      "*门*", "*門*"), "door", "door block name"),
    (("*grid*", "*bubble*", "sect-*", "*section*mark*", "*elev*mark*", "*north*", "*title*",
      "*detail*", "*revision*", "*break*line*", "*scale*bar*"), "ignore", "annotation symbol block"),
]

# Furniture policy, applied to block names first, then the layer name.
FURNITURE_RULES: list[tuple[tuple[str, ...], str, str]] = [
    (("*chair*", "*stool*", "*seat*", "*stuhl*", "*sessel*", "*chaise*", "*silla*", "*椅*"), "ignore",
     "movable seating"),
    (("*wc*", "*toilet*", "*lav*", "*sink*", "*basin*", "*tub*", "*bath*", "*shower*", "*shwr*",
      "*urinal*", "*bidet*", "*kitchen*", "*kit*", "*range*", "*oven*", "*cktop*", "*cooktop*",
      "*stove*", "*fridge*", "*ref*", "*dishwasher*", "*dw*", "*washer*", "*dryer*", "*wash*",
      "*fixt*", "*counter*", "*cabinet*", "*case*", "*p-toilet*", "*sanitary*", "*厕*", "*洗*",
      "*便*"), "solid", "fixed fixture (sanitary / kitchen / laundry)"),
]
_FURNITURE_DEFAULT = ("solid", "furniture is an obstacle unless movable seating")

_XREF_RE = re.compile(r"^.*\$\d+\$")


def strip_xref_prefix(name: str) -> str:
    """``xref-NAME$0$A-WALL`` -> ``A-WALL``; ``NAME|A-WALL`` -> ``A-WALL``."""
    stripped = _XREF_RE.sub("", name)
    if "|" in stripped:
        stripped = stripped.rsplit("|", 1)[-1]
    return stripped or name


def _match(name: str, patterns: Iterable[str]) -> str | None:
    for pat in patterns:
        if fnmatch.fnmatchcase(name, pat):
            return pat
    return None


@dataclass(frozen=True)
class RoleChoice:
    """A role and the reason it was chosen."""

    role: str
    reason: str
    known: bool = True   # False for the unknown-layer fallback


class RoleResolver:
    """Resolves layer and block names to roles (caller's patterns first, then defaults).

    Parameters
    ----------
    roles : dict or None
        ``{layer pattern: role, ..., "blocks": {block pattern: role}}`` as returned by
        :func:`read_roles`. Patterns are shell patterns, case-insensitive.
    """

    def __init__(self, roles: dict[str, Any] | None = None):
        roles = dict(roles or {})
        blocks = roles.pop("blocks", {}) or {}
        self.user_layers = [(str(k).lower(), _checked_role(v, LAYER_ROLES, f"roles[{k!r}]"))
                            for k, v in roles.items()]
        self.user_blocks = [(str(k).lower(), _checked_role(v, BLOCK_ROLES, f"roles['blocks'][{k!r}]"))
                            for k, v in dict(blocks).items()]
        self._layer_cache: dict[str, RoleChoice] = {}
        self._block_cache: dict[str, RoleChoice | None] = {}

    def layer_role(self, layer: str) -> RoleChoice:
        """Role of a layer name (never None: unknown layers fall back to ``wall``)."""
        hit = self._layer_cache.get(layer)
        if hit is None:
            hit = self._layer_cache[layer] = self._layer_role(layer)
        return hit

    def _layer_role(self, layer: str) -> RoleChoice:
        full = layer.lower()
        core = strip_xref_prefix(layer).lower()
        for pat, role in self.user_layers:
            if fnmatch.fnmatchcase(full, pat) or fnmatch.fnmatchcase(core, pat):
                return RoleChoice(role, f"caller's pattern '{pat}'")
        if core == "0":
            return RoleChoice("wall", "layer 0 (no name): fallback wall", known=False)
        for patterns, role, why in DEFAULT_LAYER_RULES:
            pat = _match(core, patterns)
            if pat is not None:
                return RoleChoice(role, f"{why} ('{pat}')")
        m = _ISO_RE.match(core)
        if m and m.group(1) in _ISO_CODES:
            role, why = _ISO_CODES[m.group(1)]
            return RoleChoice(role, f"ISO 13567-style element code {m.group(1)}: {why}")
        return RoleChoice("wall", "unknown layer name: fallback wall", known=False)

    def block_role(self, block: str) -> RoleChoice | None:
        """Role forced by a block name, or None when the block takes its entities' layer roles."""
        if block in self._block_cache:
            return self._block_cache[block]
        full = block.lower()
        core = strip_xref_prefix(block).lower()
        choice = None
        for pat, role in self.user_blocks:
            if fnmatch.fnmatchcase(full, pat) or fnmatch.fnmatchcase(core, pat):
                choice = RoleChoice(role, f"caller's block pattern '{pat}'")
                break
        if choice is None and not core.startswith("*"):   # anonymous *U/*D/*X blocks have no name
            for patterns, role, why in DEFAULT_BLOCK_RULES:
                pat = _match(core, patterns)
                if pat is not None:
                    choice = RoleChoice(role, f"{why} ('{pat}')")
                    break
        self._block_cache[block] = choice
        return choice

    def furniture_policy(self, names: Iterable[str]) -> RoleChoice:
        """``solid`` or ``ignore`` for furniture, from block names (innermost first) then the layer."""
        for name in names:
            core = strip_xref_prefix(name).lower()
            for patterns, role, why in FURNITURE_RULES:
                pat = _match(core, patterns)
                if pat is not None:
                    return RoleChoice(role, f"{why} ('{pat}' in '{name}')")
        return RoleChoice(*_FURNITURE_DEFAULT)


def _checked_role(value: Any, allowed: tuple[str, ...], where: str) -> str:
    if not isinstance(value, str) or value not in allowed:
        hint = difflib.get_close_matches(str(value), allowed, n=1, cutoff=0.5)
        extra = f" (did you mean '{hint[0]}'?)" if hint else ""
        raise ValueError(f"{where}: role {value!r} is not one of {', '.join(allowed)}{extra}")
    return value


# validates every entry of [layers] and [blocks] in order, one error per bad key, pattern or role
def roles_from_site_table(table: dict[str, Any], path: str) -> dict[str, Any]:  # noqa: C901
    """Validate the ``[layers]`` and ``[blocks]`` tables of a parsed site file.

    Other top-level tables (stations, clearance, ...) belong to other readers and are
    left alone, except names that look like a misspelt ``layers`` / ``blocks``.

    Returns
    -------
    dict
        ``{layer pattern: role, ..., "blocks": {block pattern: role}}`` for
        :func:`~floorfit.plan.dxf.load_plan`'s ``roles``.
    """
    if not isinstance(table, dict):
        raise SiteError("expected a table of settings", path)
    for key in table:
        if key not in ("layers", "blocks"):
            hint = difflib.get_close_matches(key, ["layers", "blocks"], n=1, cutoff=0.75)
            if hint:
                raise SiteError(f"unknown key '{key}' (did you mean '{hint[0]}'?)", path, key)
    roles: dict[str, Any] = {}
    for section, allowed in (("layers", LAYER_ROLES), ("blocks", BLOCK_ROLES)):
        sub = table.get(section, {})
        if not isinstance(sub, dict):
            raise SiteError(f"expected a table [{section}] mapping name patterns to roles, "
                            f"got {type(sub).__name__}", path, section)
        out = {}
        for pattern, role in sub.items():
            where = f"{section}.{pattern}"
            if not pattern.strip():
                raise SiteError("empty name pattern", path, where)
            if not isinstance(role, str):
                raise SiteError(f"expected a role name (one of {', '.join(allowed)}), got "
                                f"{type(role).__name__} {role!r}", path, where)
            if role not in allowed:
                hint = difflib.get_close_matches(role, allowed, n=1, cutoff=0.5)
                extra = f" (did you mean '{hint[0]}'?)" if hint else ""
                raise SiteError(f"'{role}' is not one of {', '.join(allowed)}{extra}", path, where)
            out[pattern] = role
        if section == "layers":
            roles.update(out)
        elif out:
            roles["blocks"] = out
    return roles


def read_roles(path: str | Path) -> dict[str, Any]:
    """Layer and block roles from a site file (TOML with ``[layers]`` and ``[blocks]`` tables)."""
    table = read_toml(path, SiteError)
    return roles_from_site_table(table, str(path))
