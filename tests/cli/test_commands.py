"""The command list: one meaning per name (the main screen is the bench; the performance command is perf)."""
import subprocess
import sys


def test_help_lists_perf_and_hides_the_old_bench_alias():
    out = subprocess.run([sys.executable, "-m", "workbench", "--help"], capture_output=True, text=True, timeout=60)
    assert out.returncode == 0
    assert "perf" in out.stdout and "measure the performance goals" in out.stdout
    assert "bench" not in out.stdout.replace("workbench", "")
    old = subprocess.run([sys.executable, "-m", "workbench", "bench", "--help"], capture_output=True, text=True,
                         timeout=60)
    assert old.returncode == 0 and "--subgroups" in old.stdout  # the alias still works for one release
