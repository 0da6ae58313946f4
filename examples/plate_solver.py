"""Steady laminar flat-plate solve on meshgen's member folders, with the results written back.

Usage (needs the test extra: ``pip install ".[test]"``, which brings scikit-fem and scipy)::

    python examples/plate_solver.py MEMBER_DIR [MEMBER_DIR ...] [--shear reaction|gradient] [--quiet]

MEMBER_DIR is a folder meshgen wrote (``meshgen build -o DIR``, ``DIR/level-k`` of
``meshgen family``, a variant folder of ``meshgen sweep``) holding a 2-D ``.msh`` file,
``plan.json`` and ``bc.json``. Build the case with an upstream block and no wake block
(``domain.downstream = 0``): the plate then runs out through the outlet, so Cf near x = L
is not raised by the trailing edge (physics, not the grid). Exit code 1 if a member failed.

What is solved: the steady incompressible Navier-Stokes equations in kinematic form,

    (u . grad) u - nu lap u + grad p = 0,    div u = 0,

with scikit-fem: Taylor-Hood quadrilaterals (biquadratic Q2 velocity, bilinear Q1
pressure), Newton's method on the Galerkin weak form, and continuation in the Reynolds
number (from RE_START in steps of RE_STEP up to Re_L = U L / nu; a step whose Newton
iteration fails is retried halfway). Each Newton step is one sparse direct solve with
scipy's SuperLU, on a nested-dissection ordering of the unknowns (dissection_order).

Boundary conditions, by each group's role in ``bc.json`` (so renamed groups work):

- inlet: u = U, v = 0;
- wall (the plate, 0 <= x <= L): no slip, u = v = 0;
- symmetry (ahead of the plate): v = 0, zero shear;
- far-field (the top): u = U fixed, v free (the displacement flow leaves the domain);
- outlet: traction-free (nu du/dn - p n = 0).

U, nu, rho and L come from ``plan.json``; rho only turns the kinematic wall shear into
tau_w [Pa].

Wall shear, ``--shear reaction`` (default): the x-momentum residual of the converged
solution at the wall's degrees of freedom is the consistent reaction (the wall's force on
each test function); its projection on the wall's quadratic trace gives tau_w, and its sum
the drag. ``--shear gradient``: nu du/dy of the Q2 velocity at each wall node, averaged
over the two cells that meet there. On meshgen's meshes (Re_L = 1e5) both agree to about
1e-4 from x/L = 0.05 on; nearer the leading edge the reaction is the closer to Blasius
(mean deviation over x/L = 0.005-0.05 on a 3,000-cell mesh: reaction 1.9 %, gradient 2.2 %).

Written into MEMBER_DIR (each through a temporary name, then renamed):

- ``wall.csv``: one row per wall node with 0 < x <= L (the leading edge, a singularity of
  the flow, is left out), after two ``#`` comment lines; columns ``x`` [m] from the
  leading edge, ``cf`` [-] = tau_w / (0.5 rho U^2), ``tau_w`` [Pa] and ``y_plus`` [-] =
  y1 u_tau / nu with y1 the distance of the FIRST NODE off the wall (the first-cell
  height, i.e. meshgen's ``wall.y_plus_at = "node"``; no cell-centre value is written)
  and u_tau = sqrt(|tau_w| / rho).
- ``results.json``: ``{"cf_mid": Cf at x/L = 0.5, "cd": the plate's drag coefficient}``,
  with cd = (wall x-force per unit span) / (0.5 rho U^2 L). Cf at x/L = 0.5 is the wall
  node's value when a node sits there, else interpolated between the two nodes around it
  linearly in Cf sqrt(x), which is nearly constant along a laminar plate.

For comparison (Blasius similarity solution; Howarth 1938, as tabulated in Schlichting,
Boundary-Layer Theory): Cf = 0.664 / sqrt(Re_x), CD = 1.328 / sqrt(Re_L).
"""

from __future__ import annotations

import argparse
import json
import math
import os
import sys
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

import meshio
import numpy as np
import scipy.sparse as sp
import skfem as fem
from scipy.sparse.linalg import splu
from skfem.helpers import ddot, div, dot, grad, mul

#: Reynolds number the continuation starts from: Newton converges there from a uniform
#: stream on meshgen's plate meshes (measured); lower targets are solved directly.
RE_START = 1e4
#: Continuation: each successful step multiplies Re by at most this.
RE_STEP = 10.0
#: Newton stops when the update is below this fraction of the velocity's size (the
#: quadratic convergence then leaves an error of about its square) ...
NEWTON_TOL = 1e-7
#: ... and at the Reynolds numbers on the way, which only start the next step.
STAGE_TOL = 1e-2
#: A Newton iteration fails after this many steps, or when the update grows twice in a row.
NEWTON_MAX_STEPS = 10


class SolveError(Exception):
    """The member folder cannot be solved (missing files, a 3-D mesh, no convergence)."""


@dataclass(frozen=True)
class Member:
    folder: Path
    velocity: float  # U [m/s]
    nu: float  # [m2/s]
    density: float  # [kg/m3]
    length: float  # L [m]
    groups: dict[str, str]  # role -> group name
    mesh_file: Path


def read_member(folder: Path) -> Member:
    """Flow figures from plan.json, group roles from bc.json, the MSH file they list."""
    try:
        plan = json.loads((folder / "plan.json").read_text())
        sheet = json.loads((folder / "bc.json").read_text())
    except (OSError, ValueError) as exc:
        raise SolveError(f"{folder}: no readable plan.json and bc.json ({exc})") from None
    if plan.get("dimension") != 2:
        raise SolveError(f"{folder}: only 2-D meshes are solved (dimension {plan.get('dimension')})")
    msh = [f for f in plan.get("files", []) if f.endswith(".msh") and not f.endswith(".v2.msh")]
    msh += [f for f in plan.get("files", []) if f.endswith(".v2.msh")]
    if not msh:
        raise SolveError(f"{folder}: plan.json lists no .msh file (build with --format msh)")
    groups = {g["role"]: g["name"] for g in sheet["groups"]}
    missing = [r for r in ("inlet", "outlet", "wall", "farfield") if r not in groups]
    if missing:
        raise SolveError(f"{folder}: bc.json has no group for {', '.join(missing)}")
    return Member(folder, float(plan["velocity"]), float(plan["nu"]), float(plan["density"]),
                  float(plan["length"]), groups, folder / msh[0])


def load_mesh(member: Member) -> tuple[fem.MeshQuad1, dict[str, np.ndarray]]:
    """The quads as a scikit-fem mesh and each role's boundary facets (indices into mesh.facets)."""
    m = meshio.gmsh.read(str(member.mesh_file))
    quads = np.concatenate([b.data for b in m.cells if b.type == "quad"])
    mesh = fem.MeshQuad1(np.ascontiguousarray(m.points[:, :2].T), np.ascontiguousarray(quads.T))
    n = mesh.p.shape[1]
    facet_key = mesh.facets[0].astype(np.int64) * n + mesh.facets[1]
    order = np.argsort(facet_key)
    facets = {}
    for role, name in member.groups.items():
        lines = [b.data[ids] for b, ids in zip(m.cells, m.cell_sets.get(name, [])) if b.type == "line"]
        if not lines:
            raise SolveError(f"{member.mesh_file}: group {name!r} ({role}) has no boundary lines")
        lines = np.sort(np.concatenate(lines), axis=1).astype(np.int64)
        pos = np.searchsorted(facet_key, lines[:, 0] * n + lines[:, 1], sorter=order)
        facets[role] = order[np.minimum(pos, order.size - 1)]
        if not np.array_equal(facet_key[facets[role]], lines[:, 0] * n + lines[:, 1]):
            raise SolveError(f"{member.mesh_file}: group {name!r} has lines that are not cell edges")
    return mesh, facets


@fem.BilinearForm
def jacobian_form(du, v, w):
    """Newton's matrix of viscous + convective terms about the iterate w.u0."""
    u0 = w["u0"]
    return w["nu"] * ddot(grad(du), grad(v)) + dot(mul(grad(du), u0) + mul(grad(u0), du), v)


@fem.LinearForm
def newton_rhs(v, w):
    """((u0 . grad) u0, v): what Newton's linearisation moves to the right-hand side."""
    u0 = w["u0"]
    return dot(mul(grad(u0), u0), v)


@fem.BilinearForm
def divergence_form(u, q, w):
    return div(u) * q


@fem.BilinearForm
def trace_mass(u, v, w):
    return u * v


def dissection_order(matrix: sp.spmatrix, coords: np.ndarray, leaf: int = 64) -> np.ndarray:
    """A nested-dissection ordering of the unknowns (each half first, the separator last).

    The unknowns are split at the median of their rank along the longer side of the box
    they span (ranks, so a stretched grid splits by count); the separator is the part of one
    half that the matrix couples to the other. With it SuperLU's LU of the saddle-point
    matrix has about half the fill of its own COLAMD ordering and is several times faster on
    these grids. Recursion is over subdomains (about 2 n / leaf of them), never over cells.
    """
    ranks = np.vstack([np.unique(c, return_inverse=True)[1] for c in coords]).astype(float)
    graph = (abs(matrix) + abs(matrix).T).tocsr()
    graph.data[:] = 1.0

    def split(idx: np.ndarray, g: sp.csr_matrix) -> list[np.ndarray]:
        c = ranks[:, idx]
        if idx.size <= leaf:
            return [idx]
        axis = int(np.argmax(np.ptp(c, axis=1)))
        left = c[axis] <= np.median(c[axis])
        if left.all() or not left.any():
            return [idx]
        touch = np.zeros(idx.size, dtype=bool)
        touch[left] = np.asarray(g[left][:, ~left].sum(axis=1)).ravel() > 0
        a, b = left & ~touch, ~left
        return split(idx[a], g[a][:, a]) + split(idx[b], g[b][:, b]) + [idx[touch]]

    return np.concatenate(split(np.arange(matrix.shape[0]), graph))


class PlateProblem:
    """Taylor-Hood discretisation of one member with its Dirichlet data."""

    def __init__(self, member: Member):
        self.member = member
        self.mesh, self.facets = load_mesh(member)
        # 4 x 4 Gauss points integrate the convective term exactly on rectangles.
        self.ub = fem.Basis(self.mesh, fem.ElementVector(fem.ElementQuad2()), intorder=6)
        self.pb = fem.Basis(self.mesh, fem.ElementQuad1(), quadrature=self.ub.quadrature)
        self.nu_dofs, self.np_dofs = self.ub.N, self.pb.N
        self.B = fem.asm(divergence_form, self.ub, self.pb)  # (np, nu): q div u
        self._set_dirichlet()
        self.order: np.ndarray | None = None

    def _set_dirichlet(self) -> None:
        values = np.zeros(self.nu_dofs + self.np_dofs)
        values[np.concatenate([self._dofs("inlet", "u^1"), self._dofs("farfield", "u^1")])] = self.member.velocity
        wall = np.concatenate([self._dofs("wall", "u^1"), self._dofs("wall", "u^2")])
        values[wall] = 0.0  # the wall wins at the corners it shares (leading edge, outlet)
        fixed = [self._dofs("inlet", "u^1"), self._dofs("farfield", "u^1"), self._dofs("inlet", "u^2"), wall]
        if "symmetry" in self.facets:
            fixed.append(self._dofs("symmetry", "u^2"))
        self.fixed = np.unique(np.concatenate(fixed))
        self.values = values
        self.free = np.setdiff1d(np.arange(values.size), self.fixed)

    def _dofs(self, role: str, component: str) -> np.ndarray:
        """The velocity component's degrees of freedom on a boundary (vertex and edge ones)."""
        return self.ub.get_dofs(self.facets[role]).all([component])

    def x_velocity_dofs(self) -> np.ndarray:
        """Every degree of freedom of the x-velocity (vertex, edge and interior ones)."""
        ub = self.ub
        return np.concatenate([ub.nodal_dofs[0], ub.facet_dofs[0], ub.interior_dofs[0]])

    def newton_step(self, x0: np.ndarray, nu: float) -> np.ndarray:
        """The next Newton iterate of velocity and pressure (one sparse direct solve).

        Newton's linearisation of (u . grad) u about u0 is (u0 . grad) u + (u . grad) u0
        - (u0 . grad) u0, so the new iterate solves J x = ((u0 . grad) u0, v) directly.
        """
        w = self.ub.interpolate(x0[: self.nu_dofs])
        J = fem.asm(jacobian_form, self.ub, u0=w, nu=nu)
        K = sp.bmat([[J, -self.B.T], [-self.B, None]], format="csr")
        rhs = np.concatenate([fem.asm(newton_rhs, self.ub, u0=w), np.zeros(self.np_dofs)])
        x = np.where(np.isin(np.arange(rhs.size), self.fixed), self.values, 0.0)
        rhs = (rhs - K @ x)[self.free]
        Kf = K[self.free][:, self.free]
        if self.order is None:
            locs = np.concatenate([self.ub.doflocs, self.pb.doflocs], axis=1)[:, self.free]
            self.order = dissection_order(Kf, locs)
        o = self.order
        Ko = Kf[o][:, o].tocsc()
        # A small pivot threshold keeps the dissection order (the zero pressure diagonal
        # still gets its row exchange); the residual check falls back to full pivoting.
        sol = splu(Ko, permc_spec="NATURAL", diag_pivot_thresh=1e-3).solve(rhs[o])
        if np.linalg.norm(Ko @ sol - rhs[o]) > 1e-8 * np.linalg.norm(rhs):
            sol = splu(Ko).solve(rhs[o])
        x[self.free[o]] = sol
        return x

    def solve(self, reynolds: float, log=print) -> np.ndarray:
        """Velocity and pressure at Re_L = reynolds, by continuation from RE_START.

        Steps below the target Reynolds number only need to be close enough to start the
        next one (STAGE_TOL); the last is converged to NEWTON_TOL. A step whose Newton
        iteration fails is retried halfway (in log Re) from the last converged one.
        """
        m = self.member
        x = np.zeros(self.nu_dofs + self.np_dofs)
        x[self.x_velocity_dofs()] = m.velocity  # uniform stream, then the Dirichlet values
        x[self.fixed] = self.values[self.fixed]
        re_done, re, steps = None, min(RE_START, reynolds), 0
        while True:
            last = re >= reynolds
            ok, y, its = self._newton(x, m.velocity * m.length / re, NEWTON_TOL if last else STAGE_TOL)
            steps += its
            log(f"  Re = {re:.4g}: Newton {'converged' if ok else 'failed'} after {its} steps")
            if ok:
                x, re_done = y, re
                if last:
                    self.newton_steps = steps
                    return x
                re = min(reynolds, re * RE_STEP)
                continue
            low = re_done if re_done is not None else re / RE_STEP
            if re / low < 1.05:
                raise SolveError(f"{m.folder}: Newton does not converge beyond Re = {low:.4g}")
            re = math.sqrt(re * low)

    def _newton(self, x: np.ndarray, nu: float, tol: float) -> tuple[bool, np.ndarray, int]:
        n, changes = self.nu_dofs, [math.inf]
        for k in range(1, NEWTON_MAX_STEPS + 1):
            try:
                y = self.newton_step(x, nu)
            except RuntimeError:  # SuperLU: the matrix is singular at this iterate
                return False, x, k
            if not np.all(np.isfinite(y)):
                return False, x, k
            changes.append(np.linalg.norm(y[:n] - x[:n]) / max(np.linalg.norm(y[:n]), 1e-300))
            x = y
            if changes[-1] < tol:
                return True, x, k
            if len(changes) > 3 and changes[-1] > changes[-2] > changes[-3]:
                return False, x, k
        return False, x, NEWTON_MAX_STEPS

    def wall_shear(self, x: np.ndarray, nu: float, method: str = "reaction") -> WallShear:
        """The kinematic wall shear nu du/dy [m2/s2] at the wall nodes, sorted by x."""
        wall = self.facets["wall"]
        nodes = np.unique(self.mesh.facets[:, wall])
        xs = self.mesh.p[0, nodes]
        order = np.argsort(xs)
        heights = self._first_node_heights(wall, nodes)[order]
        if method == "gradient":
            shear = self._gradient_shear(x, wall, xs[order], nu)
            return WallShear(xs[order], shear, heights, float(np.trapezoid(shear, xs[order])))
        # The x-momentum residual without the Dirichlet rows is, at a wall test function, the
        # integral of the traction the fluid feels, nu du/dn - p n, whose x-part is -nu du/dy
        # on the plate (n = (0, -1)); the pressure gives no x-force there.
        n = self.nu_dofs
        w = self.ub.interpolate(x[:n])
        residual = fem.asm(jacobian_form, self.ub, u0=w, nu=nu) @ x[:n] - fem.asm(newton_rhs, self.ub, u0=w)
        residual -= self.B.T @ x[n:]
        # Scalar Q2 dofs and the x-velocity dofs share their layout (vertex, edge, interior).
        sb = fem.Basis(self.mesh, fem.ElementQuad2())
        to_vector = np.empty(sb.N, dtype=np.int64)
        for kind in ("nodal_dofs", "facet_dofs", "interior_dofs"):
            to_vector[getattr(sb, kind)[0]] = getattr(self.ub, kind)[0]
        scalar = sb.get_dofs(wall).all()
        reaction = -residual[to_vector[scalar]]
        mass = fem.asm(trace_mass, fem.FacetBasis(self.mesh, fem.ElementQuad2(), facets=wall))
        shear = splu(mass[scalar][:, scalar].tocsc()).solve(reaction)
        at_nodes = shear[np.searchsorted(scalar, nodes)]  # scalar vertex dof i is mesh node i
        return WallShear(xs[order], at_nodes[order], heights, float(reaction.sum()))

    def _first_node_heights(self, wall: np.ndarray, nodes: np.ndarray) -> np.ndarray:
        """Distance [m] from each wall node to the first node above it (the first-cell height)."""
        cells = self.mesh.t[:, self.mesh.f2t[0, wall]]  # the cell on each wall facet
        y = self.mesh.p[1, cells]
        off = ~np.isin(cells, nodes)  # the two corners off the wall (the plate is y = 0)
        facet_height = (y * off).sum(axis=0) / off.sum(axis=0)
        ends = np.searchsorted(nodes, self.mesh.facets[:, wall])
        total = np.bincount(ends.ravel(), weights=np.tile(facet_height, 2), minlength=nodes.size)
        return total / np.bincount(ends.ravel(), minlength=nodes.size)

    def _gradient_shear(self, x: np.ndarray, wall: np.ndarray, xs: np.ndarray, nu: float) -> np.ndarray:
        """nu du/dy at the wall nodes (x sorted: xs), averaged over the two facets that meet there."""
        # Quadrature points at the facet ends (the weights are not used): the wall nodes.
        pts, wts = np.array([[0.0, 1.0]]), np.array([0.5, 0.5])
        fb = fem.FacetBasis(self.mesh, fem.ElementVector(fem.ElementQuad2()), facets=wall, quadrature=(pts, wts))
        dudy = fb.interpolate(x[: self.nu_dofs]).grad[0, 1]  # (facets, ends)
        xq = fb.global_coordinates().value[0]
        mid = np.concatenate([[-np.inf], 0.5 * (xs[1:] + xs[:-1])])
        idx = np.searchsorted(mid, xq) - 1  # the nearest wall node
        total = np.bincount(idx.ravel(), weights=dudy.ravel(), minlength=xs.size)
        return nu * total / np.bincount(idx.ravel(), minlength=xs.size)


@dataclass(frozen=True)
class WallShear:
    """Kinematic wall shear nu du/dy [m2/s2] at the wall nodes (x [m] increasing)."""

    x: np.ndarray
    shear: np.ndarray
    first_height: np.ndarray  # distance of the first node off the wall [m]
    force: float  # the plate's x-force per unit depth and density [m3/s2]

    def at(self, x: float) -> float:
        """The shear at x [m]: the value at a wall node there, else interpolated between the two
        nodes around it linearly in shear * sqrt(x) (nearly constant along a laminar plate)."""
        k = int(np.searchsorted(self.x, x))
        if k < self.x.size and math.isclose(self.x[k], x, rel_tol=1e-9, abs_tol=1e-12):
            return float(self.shear[k])
        root = np.sqrt(np.abs(self.x))
        return float(np.interp(x, self.x, self.shear * root) / math.sqrt(x))


def write_atomic(path: Path, text: str) -> None:
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(text)
        os.chmod(tmp, 0o644)
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def write_results(member: Member, wall: WallShear, folder: Path) -> dict[str, float]:
    """wall.csv and results.json in the member folder (see the module docstring)."""
    U, rho, L = member.velocity, member.density, member.length
    dynamic = 0.5 * rho * U**2
    tau = rho * wall.shear
    cf = tau / dynamic
    y_plus = wall.first_height * np.sqrt(np.abs(wall.shear)) / member.nu
    header = (
        "# steady laminar Navier-Stokes (examples/plate_solver.py, scikit-fem Q2/Q1); "
        f"U = {U:g} m/s, nu = {member.nu:g} m2/s, rho = {rho:g} kg/m3, L = {L:g} m\n"
        "# x [m] from the leading edge; cf = tau_w / (0.5 rho U^2); tau_w [Pa]; y_plus at the "
        "FIRST NODE off the wall (distance = first-cell height), u_tau = sqrt(|tau_w| / rho)\n"
        "x,cf,tau_w,y_plus\n"
    )
    on = wall.x > 0  # the leading edge is a singularity of the flow, not a skin friction
    rows = np.column_stack([wall.x, cf, tau, y_plus])[on]
    write_atomic(folder / "wall.csv", header + "".join(
        ",".join(f"{v:.10g}" for v in row) + "\n" for row in rows.tolist()))
    results = {
        "cf_mid": rho * wall.at(0.5 * L) / dynamic,
        "cd": rho * wall.force / (dynamic * L),
    }
    write_atomic(folder / "results.json", json.dumps(results, indent=2, allow_nan=False) + "\n")
    return results


def solve_member(folder: Path, shear: str = "reaction", log=print) -> dict[str, float]:
    """Solve one member folder and write its wall.csv and results.json; the results."""
    member = read_member(folder)
    start = time.perf_counter()
    problem = PlateProblem(member)
    reynolds = member.velocity * member.length / member.nu
    log(f"{folder}: {problem.mesh.t.shape[1]:,} cells, {problem.nu_dofs + problem.np_dofs:,} unknowns, "
        f"Re_L = {reynolds:.4g}")
    x = problem.solve(reynolds, log=log)
    results = write_results(member, problem.wall_shear(x, member.nu, shear), folder)
    blasius = 0.664 / math.sqrt(0.5 * reynolds)
    log(f"  {problem.newton_steps} Newton steps in {time.perf_counter() - start:.1f} s; "
        f"cf_mid = {results['cf_mid']:.5g} (Blasius {blasius:.5g}), cd = {results['cd']:.5g} "
        f"(Blasius {1.328 / math.sqrt(reynolds):.5g})")
    return results


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("members", nargs="+", type=Path, metavar="MEMBER_DIR",
                        help="folders meshgen wrote (plan.json, bc.json and a .msh file)")
    parser.add_argument("--shear", choices=("reaction", "gradient"), default="reaction",
                        help="wall shear from the wall reaction (default) or the velocity gradient")
    parser.add_argument("--quiet", action="store_true", help="print only errors")
    args = parser.parse_args(argv)
    log = (lambda _: None) if args.quiet else (lambda s: print(s, flush=True))
    failed = 0
    for folder in args.members:
        try:
            solve_member(folder, args.shear, log)
        except SolveError as exc:
            print(f"error: {exc}", file=sys.stderr)
            failed += 1
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
