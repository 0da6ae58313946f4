"""Running out of memory ends in one line naming the size and what to reduce (issue 11, item 11).

gmsh raises an Exception with no message when an allocation fails; before, that reached
the user as a bare traceback ending in ``Exception``. The child process limits its own
address space (RLIMIT_AS) a little above what it holds once everything is imported, then
builds about 1.4e6 cells, which needs several hundred MB more.
"""

import subprocess
import sys

CHILD = """
import resource, sys
from meshgen.cli import main
import gmsh, numpy, meshgen.pipeline.build, meshgen.meshing.builder, meshgen.io.writers
vm = next(int(l.split()[1]) for l in open("/proc/self/status") if l.startswith("VmSize:")) * 1024
resource.setrlimit(resource.RLIMIT_AS, (vm + 150 * 2**20, resource.RLIM_INFINITY))
sys.exit(main(sys.argv[1:]))
"""
BIG = ["--set", "flow.fluid=", "--set", "flow.velocity=", "--set", "flow.reynolds=1e6",
       "--set", "streamwise.max_spacing=0.0002", "--set", "streamwise.far_spacing=0.001",
       "--set", "wall.growth_ratio=1.01", "--set", "wall.max_spacing=0.01", "--set", "output.max_cells=100000000"]


def test_out_of_memory_is_one_line_with_the_size(tmp_path):
    proc = subprocess.run([sys.executable, "-c", CHILD, "build", *BIG, "--no-pictures", "--format", "su2",
                           "-o", str(tmp_path / "o")], capture_output=True, text=True, timeout=300, check=False)
    assert proc.returncode == 1, proc.stderr
    assert "Traceback" not in proc.stderr, proc.stderr
    (line,) = [ln for ln in proc.stderr.splitlines() if ln.startswith("error:")]
    assert "memory" in line and ("1,377,600 cells" in line or "cell count" in line), line
    assert not (tmp_path / "o" / "plan.json").exists()
