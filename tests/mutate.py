"""Mutation testing one module at a time, each with its own unit-level test selection.

mutmut reads one ``[tool.mutmut]`` section (from ``pyproject.toml`` in the folder it runs in), so a single
configuration gives every module the same test selection.  This script gives each module its own: it makes
``mutants-by-module/NAME/`` (ignored by git) holding links to ``workbench``, ``tests`` and ``demo_data`` and a
``pyproject.toml`` equal to the project's except for ``[tool.mutmut]``, which mutates that module only and runs
only the module's test files (``SELECTION`` below); then it runs mutmut there with one worker under
``nice``.  Each module keeps its own results, so a module can be rerun without touching the others.

    .venv/bin/python tests/mutate.py rules                # run (resumes where it stopped)
    .venv/bin/python tests/mutate.py rules --fresh        # start over (after the module's tests changed)
    .venv/bin/python tests/mutate.py rules --results      # the survivors
    .venv/bin/python tests/mutate.py rules --show NAME    # one mutant's diff
    .venv/bin/python tests/mutate.py --score              # killed / survived per module

Not part of ``.ci/run`` (CPU-heavy); see DEVELOPERS.md "Mutation testing" and tests/MUTATION.md.
"""
from __future__ import annotations

import json
import os
import re
import shutil
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
WORK = ROOT / "mutants-by-module"
C, K, CASE = "tests/core/charts/", "tests/core/capability/", "tests/core/case/"

# module -> (source file, the unit-level test files that check it directly)
SELECTION: dict[str, tuple[str, list[str]]] = {
    "rules": ("workbench/core/charts/rules.py", [C + "test_rules.py", C + "test_ref_rules_edges.py"]),
    "constants": ("workbench/core/charts/constants.py", [C + "test_constants.py", C + "test_ref_constants_table.py"]),
    "variables": ("workbench/core/charts/variables.py", [
        C + "test_charts.py", C + "test_ref_sigma_exclusions.py", C + "test_ref_chart_switch.py",
        C + "test_pooled_sbar.py", C + "test_ref_variables_kernels.py"]),
    "attribute": ("workbench/core/charts/attribute.py", [
        C + "test_attribute.py", C + "test_ref_laney_dispersion.py", C + "test_ref_attribute_edges.py"]),
    "formulas": ("workbench/core/capability/formulas.py", [
        K + "test_capability_formulas.py", K + "test_ref_percentile.py", K + "test_capability_assess.py",
        K + "test_ref_formulas_edges.py", K + "test_ref_formulas_shapes.py"]),
    "streams": ("workbench/core/streams.py", ["tests/core/test_streams.py", "tests/core/test_ref_breakdown_sides.py",
                                             "tests/core/test_ref_stream_rows.py", "tests/core/test_ref_stream_history.py",
                                             "tests/core/test_ref_stream_degenerate.py"]),
    "format": ("workbench/core/case/format.py", [
        CASE + "test_case_file.py", CASE + "test_ref_chain_links.py", CASE + "test_case_replay.py",
        CASE + "test_ref_repair_accepts_exactly.py", CASE + "test_ref_database_data_ref.py"]),
    "integrity": ("workbench/core/case/integrity.py", [
        CASE + "test_case_file.py", CASE + "test_ref_chain_links.py", CASE + "test_case_replay.py",
        CASE + "test_ref_limits_difference.py", CASE + "test_ref_verify_paths.py",
        CASE + "test_ref_verify_more.py"]),
}


def toml_list(items: list[str]) -> str:
    return "[" + ", ".join(json.dumps(i) for i in items) + "]"  # a JSON string is a TOML basic string


def prepare(name: str) -> Path:
    source, tests = SELECTION[name]
    here = WORK / name
    here.mkdir(parents=True, exist_ok=True)
    for link in ("workbench", "tests", "demo_data"):
        if not (here / link).exists():
            (here / link).symlink_to(ROOT / link)
    text = (ROOT / "pyproject.toml").read_text(encoding="utf-8")
    start = text.index("[tool.mutmut]")
    following = re.search(r"^\[", text[start + 1:], flags=re.M)
    rest = text[start + 1 + following.start():] if following else ""
    section = "\n".join([
        "[tool.mutmut]",
        'source_paths = ["workbench"]',
        f"only_mutate = {toml_list([source])}",
        'also_copy = ["demo_data"]',
        f"pytest_add_cli_args_test_selection = {toml_list(tests)}",
        'pytest_add_cli_args = ["-p", "no:cacheprovider"]',
        "do_not_mutate_patterns = " + toml_list(project_patterns(text)),
        "",
    ])
    config = text[:start] + section + ("\n" + rest if rest else "")
    target = here / "pyproject.toml"
    if not target.exists() or target.read_text(encoding="utf-8") != config:
        target.write_text(config, encoding="utf-8")
    return here


def project_patterns(text: str) -> list[str]:
    import tomllib
    return tomllib.loads(text)["tool"]["mutmut"].get("do_not_mutate_patterns", [])


def mutmut(here: Path, *args: str) -> int:
    exe = Path(sys.executable).with_name("mutmut")
    return subprocess.call(["nice", "-n", "15", str(exe), *args], cwd=here)


def score() -> None:
    print(f"{'module':<10} {'mutants':>7} {'killed':>7} {'survived':>8} {'no tests':>8} {'not run':>7} {'score':>7}")
    for name in SELECTION:
        here = WORK / name
        if not (here / "mutants").exists():
            print(f"{name:<10} not run")
            continue
        out = subprocess.run([str(Path(sys.executable).with_name("mutmut")), "results", "--all", "true"],
                             cwd=here, capture_output=True, text=True).stdout
        states = [line.rsplit(":", 1)[1].strip() for line in out.splitlines() if ":" in line]
        killed = sum(s in ("killed", "timeout") for s in states)
        survived = states.count("survived")
        no_tests = states.count("no tests")
        not_run = states.count("not checked")
        done = killed + survived + no_tests  # a mutant no selected test reaches is not killed
        pct = f"{100 * killed / done:.1f} %" if done else "—"
        print(f"{name:<10} {len(states):>7} {killed:>7} {survived:>8} {no_tests:>8} {not_run:>7} {pct:>7}")


def main(argv: list[str]) -> int:
    if argv[:1] == ["--score"]:
        score()
        return 0
    if not argv or argv[0] not in SELECTION:
        print(f"usage: mutate.py MODULE [--fresh | --results | --show NAME] | --score  (MODULE: {', '.join(SELECTION)})",
              file=sys.stderr)
        return 2
    here = prepare(argv[0])
    if argv[1:2] == ["--results"]:
        return mutmut(here, "results")
    if argv[1:2] == ["--show"]:
        return mutmut(here, "show", argv[2])
    if argv[1:2] == ["--fresh"]:
        # mutmut keeps a verdict while the mutated function is unchanged, and maps only new tests to
        # functions: after a test of the module changed, start over
        shutil.rmtree(here / "mutants", ignore_errors=True)
    os.environ.setdefault("PYTHONDONTWRITEBYTECODE", "1")
    return mutmut(here, "run", "--max-children", "1")


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
