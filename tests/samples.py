"""Small meshes and helpers shared by the tests (imported as ``samples``)."""

import numpy as np

from meshgen.cli.args import _Parser
from meshgen.cli.study_commands import add_commands
from meshgen.meshing.mesh import Block, Mesh, Patch, structured_mesh


def plate_groups(i_le: int, i_te: int, i_end: int) -> list:
    """The builder's groups for a grid whose plate runs from node i_le to i_te of 0..i_end."""
    return [
        ("inlet", "inlet", (Patch("imin"),)),
        ("outlet", "outlet", (Patch("imax"),)),
        ("wall", "wall", (Patch("jmin", i_le, i_te),)),
        ("symmetry", "symmetry", (Patch("jmin", 0, i_le), Patch("jmin", i_te, i_end))),
        ("farfield", "farfield", (Patch("jmax", 0, i_end),)),
    ]


#: The 4 x 3 cell sample: upstream, plate and wake blocks.
GROUPS = plate_groups(1, 3, 4)
BLOCKS = (Block("upstream", 0, 1), Block("plate", 1, 3), Block("wake", 3, 4))


def million_cells() -> Mesh:
    """1000 x 1000 quads in three blocks, graded towards the wall."""
    x = np.linspace(-1, 2, 1001)
    y = np.concatenate([[0.0], np.geomspace(1e-5, 1, 1000)])
    blocks = (Block("upstream", 0, 300), Block("plate", 300, 800), Block("wake", 800, 1000))
    return structured_mesh(x, y, blocks, plate_groups(300, 800, 1000))


def run_cli(argv):
    """Run a study command the way meshgen.cli does, but let InputError propagate."""
    p = _Parser(prog="meshgen")
    sub = p.add_subparsers(dest="command", parser_class=_Parser)
    commands = add_commands(sub)
    args = p.parse_args(argv)
    return commands[args.command](args)
