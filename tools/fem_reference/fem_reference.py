#!/usr/bin/env python3
"""Independent finite-element reference values for holdoff's peak surface fields.

Reads a holdoff design file (TOML), meshes the (r, z) half-plane between the grounded tank and
the conductors with gmsh (second-order, curved boundary elements, graded towards every
conductor surface), solves the axisymmetric Laplace equation div(r grad u) = 0 with P2
elements in scikit-fem, and takes the surface field of each conductor from the consistent
boundary flux. Each case is solved on several refinement levels; the reported error is the
relative difference between the two finest levels.

Flow: design file -> bodies -> gmsh mesh -> P2 solve -> boundary flux -> peaks -> JSON.

Dielectrics (eps_r given by hand) are meshed as their own subdomains; the peak tangential
field along each dielectric's surface is the largest derivative of the solution along the
surface (the trace of the continuous P2 solution on an interface edge is one function, so the
tangential field is the same from either side).

Supported input (what the reference designs under tests/data/fem use): a cylindrical or
spherical grounded tank, conductors of shape sphere, torus, rounded_cylinder and disc,
potentials "ground", "terminal", "0.4 terminal" or an absolute voltage ("350 kV"), and
dielectrics of shape sphere, torus or rounded_cylinder with `eps_r`, lying free in the gas
(touching neither a conductor nor the tank; not checked). Anything else is refused with a message naming
the key, the value, its line and what is accepted.

Usage:
    python fem_reference.py DESIGN.toml [--out FILE.json] [--levels 40,80,160]
    python fem_reference.py --check-spheres
"""

from __future__ import annotations

import argparse
import hashlib
import json
import math
import re
import sys
import time
import tomllib
from dataclasses import dataclass, field
from pathlib import Path

import gmsh
import meshio
import numpy as np
import scipy.sparse.linalg as spla
import skfem
from skfem import Basis, BilinearForm, ElementTriP2, FacetBasis, condense
from skfem.helpers import dot, grad
from skfem.io.meshio import from_meshio
from skfem.mapping import MappingIsoparametric

# The inverse isoparametric map (used to place boundary quadrature points) iterates to 1e-12 in
# reference coordinates by default; with surface cells 1e-4 of the coordinates' size that is
# below round-off and the iteration never stops. 1e-10 still places the points to 1e-10 of a
# cell.
MappingIsoparametric.invF.__defaults__ = (50, 1e-10)

# ---------------------------------------------------------------------------------------------
# Reading the design


class DesignError(Exception):
    """A design the reference cannot take, with the key, value, line and what is accepted."""


LENGTH_UNITS = {"m": 1.0, "cm": 1e-2, "mm": 1e-3, "um": 1e-6}
VOLTAGE_UNITS = {"V": 1.0, "kV": 1e3, "MV": 1e6}
QUANTITY = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*([A-Za-z]+)\s*$")


def line_of(text: str, key: str, value: object) -> int | None:
    """First line of `text` that sets `key` to `value` (1-based), for messages."""
    shown = json.dumps(value) if isinstance(value, str) else str(value)
    for k, line in enumerate(text.splitlines(), start=1):
        if line.split("#")[0].strip().startswith(key) and shown.strip('"') in line:
            return k
    return None


@dataclass
class Reader:
    path: Path
    text: str

    def fail(self, key: str, value: object, accepted: str) -> DesignError:
        at = line_of(self.text, key.split(".")[-1].split("]")[-1], value)
        where = f"{self.path}:{at}" if at else str(self.path)
        return DesignError(f"{where}: `{key}` = {value!r} is not accepted; accepted: {accepted}")

    def quantity(self, table: dict, key: str, units: dict, what: str, path: str) -> float:
        if key not in table:
            raise DesignError(f"{self.path}: `{path}.{key}` is missing; give {what}")
        raw = table[key]
        m = QUANTITY.match(raw) if isinstance(raw, str) else None
        if not m or m.group(2) not in units:
            raise self.fail(
                f"{path}.{key}", raw, f"{what} as a string with a unit ({', '.join(units)})"
            )
        return float(m.group(1)) * units[m.group(2)]

    def length(self, table: dict, key: str, path: str) -> float:
        return self.quantity(table, key, LENGTH_UNITS, "a length", path)

    def interval(self, table: dict, key: str, path: str) -> tuple[float, float]:
        raw = table.get(key)
        if not (isinstance(raw, list) and len(raw) == 2):
            raise self.fail(f"{path}.{key}", raw, 'two lengths, e.g. ["0 mm", "250 mm"]')
        lo, hi = (self.length({key: x}, key, path) for x in raw)
        if not lo < hi:
            raise self.fail(f"{path}.{key}", raw, "an interval whose first value is smaller")
        return lo, hi


@dataclass
class Body:
    """One conductor's cross-section in the (r, z) half-plane."""

    name: str
    shape: str  # "disk" (sphere, torus) or "rect" (rounded rectangle)
    potential: float
    rc: float = 0.0  # disk centre r
    zc: float = 0.0  # disk centre z
    radius: float = 0.0  # disk radius
    r0: float = 0.0
    r1: float = 0.0
    z0: float = 0.0
    z1: float = 0.0
    corner: float = 0.0
    eps_r: float = 1.0  # dielectrics only

    def curvature_radius(self) -> float:
        """Smallest radius of curvature of the surface, metres."""
        return self.radius if self.shape == "disk" else self.corner

    def distance(self, r: np.ndarray, z: np.ndarray) -> np.ndarray:
        """Unsigned distance from points to the surface, metres."""
        return np.abs(self.signed(r, z))

    def signed(self, r: np.ndarray, z: np.ndarray) -> np.ndarray:
        """Signed distance from points to the surface (negative inside), metres."""
        if self.shape == "disk":
            return np.hypot(r - self.rc, z - self.zc) - self.radius
        # A solid body on the axis is mirrored to negative r (its axis side is no corner).
        lo = -self.r1 if self.r0 <= 0.0 else self.r0
        c = self.corner
        cr, cz = 0.5 * (lo + self.r1), 0.5 * (self.z0 + self.z1)
        hr, hz = 0.5 * (self.r1 - lo) - c, 0.5 * (self.z1 - self.z0) - c
        qr, qz = np.abs(r - cr) - hr, np.abs(z - cz) - hz
        outside = np.hypot(np.maximum(qr, 0.0), np.maximum(qz, 0.0))
        return outside + np.minimum(np.maximum(qr, qz), 0.0) - c


@dataclass
class Design:
    path: Path
    sha256: str
    tank: str  # "cylinder" or "sphere"
    radius: float
    length: float
    bodies: list[Body] = field(default_factory=list)
    dielectrics: list[Body] = field(default_factory=list)


SHAPES = {
    "sphere": ("center_z", "radius"),
    "torus": ("center_z", "major_radius", "minor_radius"),
    "rounded_cylinder": ("r", "z", "corner_radius"),
    "disc": ("r", "center_z", "thickness", "corner_radius"),
}
DIELECTRIC_SHAPES = ("sphere", "torus", "rounded_cylinder")
TOP_LEVEL = {
    "title",
    "tank",
    "gas",
    "terminal",
    "conductor",
    "dielectric",
    "checks",
    "mesh",
    "probe",
}


def read_potential(rd: Reader, text: object, terminal: float | None, path: str) -> float:
    accepted = '"ground", "terminal", "0.4 terminal" or a voltage such as "350 kV"'
    if not isinstance(text, str):
        raise rd.fail(f"{path}.potential", text, accepted)
    t = text.strip()
    if t.lower() == "ground":
        return 0.0
    if t.lower().endswith("terminal"):
        if terminal is None:
            raise DesignError(f"{rd.path}: `{path}.potential` names the terminal; give [terminal]")
        frac = t[: -len("terminal")].strip().rstrip("*").strip()
        try:
            f = 1.0 if frac == "" else float(frac)
        except ValueError:
            raise rd.fail(f"{path}.potential", text, accepted) from None
        return f * terminal
    return rd.quantity({"potential": t}, "potential", VOLTAGE_UNITS, accepted, path)


def read_shape(rd: Reader, c: dict, shape: str, name: str, v: float, at: str) -> Body:
    """The cross-section of one body (conductor at `v`, or dielectric) from its shape keys."""
    if shape == "sphere":
        b = Body(name, "disk", v, 0.0, rd.length(c, "center_z", at), rd.length(c, "radius", at))
    elif shape == "torus":
        b = Body(
            name,
            "disk",
            v,
            rd.length(c, "major_radius", at),
            rd.length(c, "center_z", at),
            rd.length(c, "minor_radius", at),
        )
        if b.radius >= b.rc:
            raise rd.fail(f"{at}.minor_radius", c["minor_radius"], "less than major_radius")
    else:
        r0, r1 = rd.interval(c, "r", at)
        if shape == "disc":
            zc, t = rd.length(c, "center_z", at), rd.length(c, "thickness", at)
            z0, z1 = zc - 0.5 * t, zc + 0.5 * t
        else:
            z0, z1 = rd.interval(c, "z", at)
        limit = min(r1 if r0 <= 0.0 else 0.5 * (r1 - r0), 0.5 * (z1 - z0))
        if "corner_radius" in c:
            corner = rd.length(c, "corner_radius", at)
        elif shape == "disc":
            corner = limit  # a disc's edge is fully rounded unless told otherwise
        else:
            raise DesignError(f"{rd.path}: `{at}.corner_radius` is missing")
        if not 0.0 < corner <= limit * (1 + 1e-9):
            raise rd.fail(
                f"{at}.corner_radius",
                c["corner_radius"],
                f"a radius > 0 and <= {limit * 1e3:g} mm (a sharp corner has no finite peak)",
            )
        b = Body(name, "rect", v, r0=r0, r1=r1, z0=z0, z1=z1, corner=corner)
    return b


def read_design(path: Path) -> Design:
    raw = path.read_bytes()
    text = raw.decode("utf-8")
    rd = Reader(path, text)
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as e:
        raise DesignError(f"{path}: not valid TOML ({e})") from None
    for key in doc:
        if key not in TOP_LEVEL:
            raise DesignError(
                f"{path}: section `{key}` is not supported by the FEM reference; "
                f"supported: {', '.join(sorted(TOP_LEVEL))}"
            )
    tank = doc.get("tank")
    if not isinstance(tank, dict):
        raise DesignError(f"{path}: a [tank] section with inner_radius (and length) is required")
    kind = tank.get("shape", "cylinder")
    if kind not in ("cylinder", "sphere"):
        raise rd.fail("tank.shape", kind, '"cylinder" or "sphere"')
    radius = rd.length(tank, "inner_radius", "tank")
    length = 2.0 * radius if kind == "sphere" else rd.length(tank, "length", "tank")
    terminal = None
    if isinstance(doc.get("terminal"), dict) and "voltage" in doc["terminal"]:
        terminal = rd.quantity(
            doc["terminal"], "voltage", VOLTAGE_UNITS, "a voltage", "terminal"
        )
    design = Design(path, hashlib.sha256(raw).hexdigest(), kind, radius, length)
    for k, c in enumerate(doc.get("conductor", [])):
        at = f"conductor[{k}]"
        name = c.get("name", at)
        shape = c.get("shape")
        if shape not in SHAPES:
            raise rd.fail(f"{at}.shape", shape, ", ".join(f'"{s}"' for s in SHAPES))
        for key in c:
            if key not in (*SHAPES[shape], "name", "shape", "potential"):
                raise rd.fail(f"{at}.{key}", c[key], f"keys of a {shape}: {SHAPES[shape]}")
        if "potential" not in c:
            raise DesignError(f"{path}: `{at}.potential` is missing (conductor \"{name}\")")
        v = read_potential(rd, c["potential"], terminal, at)
        b = read_shape(rd, c, shape, name, v, at)
        design.bodies.append(b)
    for k, c in enumerate(doc.get("dielectric", [])):
        at = f"dielectric[{k}]"
        name = c.get("name", at)
        shape = c.get("shape")
        if shape not in DIELECTRIC_SHAPES:
            raise rd.fail(f"{at}.shape", shape, ", ".join(f'"{s}"' for s in DIELECTRIC_SHAPES))
        for key in c:
            if key not in (*SHAPES[shape], "name", "shape", "eps_r"):
                raise rd.fail(
                    f"{at}.{key}", c[key], f"keys of a {shape} dielectric: {SHAPES[shape]}, eps_r"
                )
        eps = c.get("eps_r")
        if not (isinstance(eps, (int, float)) and eps >= 1.0):
            raise rd.fail(f"{at}.eps_r", eps, "a number >= 1 (materials by name are not read)")
        b = read_shape(rd, c, shape, name, 0.0, at)
        b.eps_r = float(eps)
        design.dielectrics.append(b)
    if not design.bodies:
        raise DesignError(f"{path}: no [[conductor]] found")
    return design


# ---------------------------------------------------------------------------------------------
# Mesh


def tank_distance(d: Design, r: np.ndarray, z: np.ndarray) -> np.ndarray:
    if d.tank == "sphere":
        return np.abs(np.hypot(r, z - d.radius) - d.radius)
    return np.minimum.reduce([np.abs(r - d.radius), np.abs(z), np.abs(z - d.length)])


def rounded_rectangle(occ, r0: float, r1: float, z0: float, z1: float, c: float) -> int:
    """A rectangle with all four corners rounded by `c`, from lines and quarter circles (a
    side shorter than 1e-9 of the rectangle is left out, so a fully rounded edge works)."""
    tol = 1e-9 * max(r1 - r0, z1 - z0)
    centres = [(r1 - c, z0 + c), (r1 - c, z1 - c), (r0 + c, z1 - c), (r0 + c, z0 + c)]
    # Each corner: arc from its start point to its end point, counter-clockwise.
    ends = [
        ((r1 - c, z0), (r1, z0 + c)),
        ((r1, z1 - c), (r1 - c, z1)),
        ((r0 + c, z1), (r0, z1 - c)),
        ((r0, z0 + c), (r0 + c, z0)),
    ]
    pts = [(occ.addPoint(*a, 0), occ.addPoint(*e, 0)) for a, e in ends]
    loop = []
    for k, (ctr, (pa, pe)) in enumerate(zip(centres, pts)):
        centre = occ.addPoint(*ctr, 0)
        loop.append(occ.addCircleArc(pa, centre, pe))
        nxt_start = pts[(k + 1) % 4][0]
        a, e = ends[k][1], ends[(k + 1) % 4][0]
        if math.hypot(a[0] - e[0], a[1] - e[1]) > tol:
            loop.append(occ.addLine(pe, nxt_start))
        else:
            loop[-1] = occ.addCircleArc(pa, centre, nxt_start)
    return occ.addPlaneSurface([occ.addCurveLoop(loop)])


GROWTH = 6.0


def curve_length(tag: int) -> float:
    lo, hi = gmsh.model.getParametrizationBounds(1, tag)
    t = np.linspace(lo[0], hi[0], 257)
    xyz = np.array(gmsh.model.getValue(1, tag, t)).reshape(-1, 3)
    return float(np.sum(np.linalg.norm(np.diff(xyz, axis=0), axis=1)))


def build_mesh(d: Design, n: float, growth: float = GROWTH):
    """Second-order triangle mesh of the field region. Cell size at a conductor surface is its
    smallest radius of curvature over `n`; it grows as (rho + growth * distance) / n, and
    nowhere exceeds the tank radius * 3 / n, so that every cell shrinks with `n`."""
    gmsh.initialize()
    try:
        gmsh.option.setNumber("General.Terminal", 0)
        gmsh.option.setNumber("General.NumThreads", 1)
        occ = gmsh.model.occ
        if d.tank == "sphere":
            disk = occ.addDisk(0, d.radius, 0, d.radius, d.radius)
            box = occ.addRectangle(0, 0, 0, d.radius, 2 * d.radius)
            region, _ = occ.intersect([(2, disk)], [(2, box)])
        else:
            region = [(2, occ.addRectangle(0, 0, 0, d.radius, d.length))]
        tools = []
        for b in d.bodies:
            if b.shape == "disk":
                tools.append((2, occ.addDisk(b.rc, b.zc, 0, b.radius, b.radius)))
            else:
                lo = -b.r1 if b.r0 <= 0.0 else b.r0
                tools.append((2, rounded_rectangle(occ, lo, b.r1, b.z0, b.z1, b.corner)))
        field_region, _ = occ.cut(region, tools)
        insulators = []
        for b in d.dielectrics:
            if b.shape == "disk":
                insulators.append((2, occ.addDisk(b.rc, b.zc, 0, b.radius, b.radius)))
            else:
                lo = -b.r1 if b.r0 <= 0.0 else b.r0
                insulators.append((2, rounded_rectangle(occ, lo, b.r1, b.z0, b.z1, b.corner)))
        if insulators:
            # The half-plane r >= 0 of each dielectric (one on the axis is drawn mirrored)
            # becomes a subdomain of its own, sharing its outline with the gas around it (a
            # conforming mesh across each interface).
            big = 4.0 * max(d.radius, d.length)
            half = occ.addRectangle(0, -big, 0, big, 3 * big)
            insulators, _ = occ.intersect(insulators, [(2, half)])
            field_region, _ = occ.fragment(field_region, insulators)
        occ.synchronize()
        curves = [c[1] for c in gmsh.model.getBoundary(field_region, oriented=False)]
        interfaces: dict[int, list[int]] = {k: [] for k in range(len(d.dielectrics))}
        for dim, tag in field_region:
            cx, cy, _ = occ.getCenterOfMass(dim, tag)
            inside = [float(b.signed(np.array(cx), np.array(cy))) for b in d.dielectrics]
            for k, sd in enumerate(inside):
                if sd < 0.0:
                    interfaces[k].extend(
                        c[1] for c in gmsh.model.getBoundary([(dim, tag)], oriented=False)
                    )
        owner: dict[int, list[int]] = {k: [] for k in range(len(d.bodies))}
        for c in curves:
            lo, hi = gmsh.model.getParametrizationBounds(1, c)
            x = gmsh.model.getValue(1, c, [0.5 * (lo[0] + hi[0])])
            dist = [float(b.distance(np.array(x[0]), np.array(x[1]))) for b in d.bodies]
            k = int(np.argmin(dist))
            if dist[k] < 1e-9 * d.radius:
                owner[k].append(c)
        largest = 3.0 * d.radius / n
        f = gmsh.model.mesh.field
        # One distance field per radius of curvature (bodies alike share one: cheaper).
        by_rho: dict[float, list[int]] = {}
        for k, b in enumerate(d.bodies):
            if not owner[k]:
                raise DesignError(f"{d.path}: conductor \"{b.name}\" has no surface in the field region")
            by_rho.setdefault(b.curvature_radius(), []).extend(owner[k])
        for k, b in enumerate(d.dielectrics):
            if not interfaces[k]:
                raise DesignError(f"{d.path}: dielectric \"{b.name}\" has no surface in the field region")
            by_rho.setdefault(b.curvature_radius(), []).extend(interfaces[k])
        fields = []
        for rho, owned in by_rho.items():
            dist = f.add("Distance")
            f.setNumbers(dist, "CurvesList", owned)
            # Samples every quarter of a surface cell along the longest curve, so that the
            # size near the surface does not ripple between samples.
            longest = max(curve_length(c) for c in owned)
            f.setNumber(dist, "Sampling", math.ceil(4.0 * longest * n / rho) + 1)
            # (rho + growth * distance) / n, linear in the distance up to the largest cell.
            size = f.add("Threshold")
            f.setNumber(size, "InField", dist)
            f.setNumber(size, "SizeMin", rho / n)
            f.setNumber(size, "SizeMax", largest)
            f.setNumber(size, "DistMin", 0.0)
            f.setNumber(size, "DistMax", max(largest * n - rho, 0.0) / growth)
            fields.append(size)
        smallest = f.add("Min")
        f.setNumbers(smallest, "FieldsList", fields)
        f.setAsBackgroundMesh(smallest)
        gmsh.option.setNumber("Mesh.MeshSizeExtendFromBoundary", 0)
        gmsh.option.setNumber("Mesh.MeshSizeFromPoints", 0)
        gmsh.option.setNumber("Mesh.MeshSizeFromCurvature", 0)
        gmsh.option.setNumber("Mesh.MeshSizeMax", largest)
        gmsh.option.setNumber("Mesh.Algorithm", 6)
        gmsh.model.mesh.generate(2)
        gmsh.model.mesh.setOrder(2)
        tags, xyz, _ = gmsh.model.mesh.getNodes()
        _, nodes = gmsh.model.mesh.getElementsByType(9)  # 6-node triangles
    finally:
        gmsh.finalize()
    index = np.zeros(int(tags.max()) + 1, dtype=np.int64)
    index[tags.astype(np.int64)] = np.arange(len(tags))
    points = xyz.reshape(-1, 3)[:, :2]
    triangles = index[nodes.astype(np.int64)].reshape(-1, 6)
    used = np.unique(triangles)
    renumber = np.full(len(points), -1, dtype=np.int64)
    renumber[used] = np.arange(len(used))
    return from_meshio(meshio.Mesh(points[used], [("triangle6", renumber[triangles])]))


# ---------------------------------------------------------------------------------------------
# Solve and surface field


@BilinearForm
def stiffness(u, v, w):
    """Axisymmetric Laplacian: integral of eps_r r grad u . grad v over the (r, z) half-plane."""
    return w.eps * w.x[0] * dot(grad(u), grad(v))


def element_permittivity(d: Design, mesh) -> np.ndarray:
    """Relative permittivity of each triangle, from the dielectric its vertices' centroid lies
    in (1 in the gas)."""
    cr, cz = mesh.p[:, mesh.t[:3]].mean(axis=1)
    eps = np.ones(mesh.t.shape[1])
    for b in d.dielectrics:
        eps[b.signed(cr, cz) < 0.0] = b.eps_r
    return eps


def insulator_peaks(d: Design, mesh, element, u: np.ndarray, eps: np.ndarray) -> list[dict]:
    """Peak tangential field along each dielectric's surface: on every interface edge (an
    interior edge between triangles of different permittivity) the derivative of the solution
    along the curved edge at 10 Gauss points; the largest is the peak."""
    f2t = mesh.f2t
    interior = f2t[1] >= 0
    other = np.where(interior, f2t[1], f2t[0])
    interface = np.nonzero(interior & (eps[f2t[0]] != eps[other]))[0]
    mid = mesh.p[:, mesh.facets[:, interface]].mean(axis=1)
    out = []
    for b in d.dielectrics:
        fk = interface[b.distance(mid[0], mid[1]) < 1e-3 * b.curvature_radius()]
        if len(fk) == 0:
            raise RuntimeError(f"dielectric {b.name}: no interface edges found")
        fb = FacetBasis(mesh, element, facets=fk, intorder=19)
        g = fb.interpolate(u).grad
        n = fb.normals
        e_t = np.abs(-g[0] * n[1] + g[1] * n[0])
        x = fb.global_coordinates().value
        i, j = np.unravel_index(np.argmax(e_t), e_t.shape)
        out.append(
            {
                "dielectric": b.name,
                "side": "gas",
                "peak_tangential_v_per_m": float(e_t[i, j]),
                "r_m": float(x[0][i, j]),
                "z_m": float(x[1][i, j]),
            }
        )
    return out


@BilinearForm
def weighted_mass(u, v, w):
    return w.x[0] * u * v


def solve_level(d: Design, n: float, growth: float) -> dict:
    """One refinement level: mesh, solve, peak surface field of every conductor."""
    t0 = time.time()
    mesh = build_mesh(d, n, growth)
    element = ElementTriP2()
    basis = Basis(mesh, element)
    eps = element_permittivity(d, mesh)
    a = stiffness.assemble(basis, eps=np.repeat(eps[:, None], basis.X.shape[1], axis=1))

    # Tag boundary facets by the surface their curved midside node lies on.
    facets = mesh.boundary_facets()
    mid = basis.doflocs[:, basis.facet_dofs[0][facets]]
    surfaces = [b.distance(mid[0], mid[1]) for b in d.bodies]
    surfaces.append(tank_distance(d, mid[0], mid[1]))
    surfaces.append(np.abs(mid[0]))  # the axis: natural condition
    surfaces = np.array(surfaces)
    which = np.argmin(surfaces, axis=0)
    off = surfaces[which, np.arange(len(facets))]
    if np.any(off > 1e-7 * d.radius):
        raise RuntimeError("a boundary facet lies on no known surface (touching bodies?)")
    u = basis.zeros()
    dirichlet = []
    body_facets = []
    for k, b in enumerate(d.bodies):
        fk = facets[which == k]
        dofs = basis.get_dofs(fk).all()
        u[dofs] = b.potential
        dirichlet.append(dofs)
        body_facets.append((fk, dofs))
    tank_dofs = basis.get_dofs(facets[which == len(d.bodies)]).all()
    u[tank_dofs] = 0.0
    dirichlet.append(tank_dofs)
    a_free, rhs, u, free = condense(a, x=u, D=np.concatenate(dirichlet))
    u[free] = spla.spsolve(a_free.tocsc(), rhs)

    # Consistent boundary flux: the residual of the unconstrained equations at a conductor's
    # nodes is the integral of r (du/dn) phi_i over its surface; a boundary mass matrix with
    # the same weight r turns it into the normal field along the surface.
    residual = a @ u
    peaks = []
    for b, (fk, dofs) in zip(d.bodies, body_facets):
        fb = FacetBasis(mesh, element, facets=fk, intorder=19)
        m = weighted_mass.assemble(fb)[dofs][:, dofs].tocsc()
        flux = basis.zeros()
        flux[dofs] = spla.spsolve(m, residual[dofs])
        e_flux = np.abs(fb.interpolate(flux).value)
        g = fb.interpolate(u).grad
        e_grad = np.hypot(g[0], g[1])
        x = fb.global_coordinates().value
        i, j = np.unravel_index(np.argmax(e_flux), e_flux.shape)
        peaks.append(
            {
                "conductor": b.name,
                "peak_v_per_m": float(e_flux[i, j]),
                "r_m": float(x[0][i, j]),
                "z_m": float(x[1][i, j]),
                "raw_gradient_peak_v_per_m": float(e_grad.max()),
            }
        )
    tangential = insulator_peaks(d, mesh, element, u, eps) if d.dielectrics else []
    return {
        "cells_per_radius": n,
        "unknowns": int(basis.N),
        "triangles": int(mesh.t.shape[1]),
        "smallest_surface_cell_m": min(b.curvature_radius() for b in d.bodies + d.dielectrics) / n,
        "seconds": round(time.time() - t0, 2),
        "peaks": peaks,
        "insulator_peaks": tangential,
    }


def estimate(levels: list[dict], key: str = "peaks", value: str = "peak_v_per_m") -> list[dict]:
    """Peaks of the finest level with their error: the relative difference between the two
    finest levels (conservative; with three levels the observed order and the Richardson
    extrapolation are given beside it)."""
    out = []
    ratio = levels[-1]["cells_per_radius"] / levels[-2]["cells_per_radius"]
    for k, p in enumerate(levels[-1][key]):
        f = [lv[key][k][value] for lv in levels]
        row = dict(p)
        row["reference_rel_error"] = abs(f[-1] - f[-2]) / abs(f[-1])
        if len(f) >= 3 and (f[-2] - f[-3]) != 0.0 and (f[-1] - f[-2]) != 0.0:
            q = (f[-2] - f[-3]) / (f[-1] - f[-2])
            if q > 1.0:
                order = math.log(q) / math.log(ratio)
                row["observed_order"] = order
                row["richardson_v_per_m"] = f[-1] + (f[-1] - f[-2]) / (ratio**order - 1.0)
        row["by_level_v_per_m"] = f
        out.append(row)
    return out


def reference(d: Design, ns: list[float], growth: float = GROWTH) -> dict:
    levels = [solve_level(d, n, growth) for n in ns]
    root = Path(__file__).resolve().parents[2]
    try:
        shown = str(d.path.resolve().relative_to(root))
    except ValueError:
        shown = d.path.name
    return {
        "design": shown,
        "sha256": d.sha256,
        "library": f"scikit-fem {skfem.__version__}, gmsh {gmsh.__version__}",
        "element": "P2",
        "geometry": "second-order (curved) triangles",
        "surface_field": "consistent boundary flux (r-weighted boundary mass matrix)",
        "reference_rel_error": "relative difference between the two finest levels",
        "growth": growth,
        "peaks": estimate(levels),
        "insulator_peaks": estimate(levels, "insulator_peaks", "peak_tangential_v_per_m"),
        "levels": [
            {k: v for k, v in lv.items() if k not in ("peaks", "insulator_peaks")} for lv in levels
        ],
    }


# ---------------------------------------------------------------------------------------------
# Second, independent check: concentric spheres against the closed form


def check_spheres(ns: list[float], growth: float = GROWTH) -> int:
    """examples/concentric_spheres.toml, read and solved like any design: a sphere of radius a
    in a concentric spherical tank of radius b at V has the surface field V b / (a (b - a))
    (closed form, docs/references.md section 10; 20 MV/m for a = 0.1 m, b = 0.2 m, 1 MV)."""
    root = Path(__file__).resolve().parents[2]
    d = read_design(root / "examples" / "concentric_spheres.toml")
    sphere = d.bodies[0]
    a, b, v = sphere.radius, d.radius, sphere.potential
    if d.tank != "sphere" or len(d.bodies) != 1 or abs(sphere.zc - b) > 1e-12:
        raise DesignError("examples/concentric_spheres.toml is no longer one concentric sphere")
    exact = v * b / (a * (b - a))
    result = reference(d, ns, growth)
    for lv_n, e in zip(ns, result["peaks"][0]["by_level_v_per_m"]):
        print(f"cells per radius {lv_n:6g}: peak {e:.6e} V/m, error {e / exact - 1:+.2e}")
    p = result["peaks"][0]
    true = abs(p["peak_v_per_m"] / exact - 1.0)
    print(
        f"closed form {exact:.6e} V/m; finest error {true:.2e}, "
        f"reference's own estimate {p['reference_rel_error']:.2e}"
    )
    ok = true <= 5e-4 and true <= max(p["reference_rel_error"], 1e-6)
    print("PASS" if ok else "FAIL")
    return 0 if ok else 1


def main(argv: list[str]) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("design", nargs="?", type=Path)
    ap.add_argument("--out", type=Path, help="JSON file to write (default: beside the design)")
    ap.add_argument("--levels", default="20,40,80", help="cells per radius of curvature")
    ap.add_argument("--growth", type=float, default=GROWTH, help="cell growth with distance")
    ap.add_argument("--check-spheres", action="store_true")
    args = ap.parse_args(argv)
    ns = [float(x) for x in args.levels.split(",")]
    if len(ns) < 2:
        ap.error("--levels needs at least two refinement levels")
    if args.design is None and not args.check_spheres:
        ap.error("give a design file or --check-spheres")
    try:
        if args.check_spheres:
            return check_spheres(ns, args.growth)
        d = read_design(args.design)
    except (DesignError, OSError) as e:
        print(f"error: {e}", file=sys.stderr)
        return 2
    t0 = time.time()
    result = reference(d, ns, args.growth)
    out = args.out or args.design.with_suffix(".json")
    out.write_text(json.dumps(result, indent=1) + "\n")
    for p in result["peaks"]:
        print(
            f"{p['conductor']:>16}: {p['peak_v_per_m'] / 1e6:10.5f} MV/m at "
            f"r = {p['r_m'] * 1e3:8.3f} mm, z = {p['z_m'] * 1e3:8.3f} mm, "
            f"error {p['reference_rel_error']:.1e}"
        )
    for p in result["insulator_peaks"]:
        print(
            f"{p['dielectric']:>16}: {p['peak_tangential_v_per_m'] / 1e6:10.5f} MV/m tangential "
            f"at r = {p['r_m'] * 1e3:8.3f} mm, z = {p['z_m'] * 1e3:8.3f} mm, "
            f"error {p['reference_rel_error']:.1e}"
        )
    print(f"wrote {out} in {time.time() - t0:.1f} s")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
