"""The contributor guide's list of equivalent mutants is well formed and still names real lines.

benchmarks/mutation.py counts a surviving mutant as equivalent when its change is listed under
"Equivalent mutants" in DEVELOPERS.md. Each entry must name a module of the script, give a source line
and its mutated form, say why no test can tell them apart, and point at a line that is in the source
now: once, or at every occurrence equivalent (said in the reason).
"""

import importlib.util
import pathlib
import re

ROOT = pathlib.Path(__file__).resolve().parents[1]
ENTRY = re.compile(r"^- `(?P<module>[a-z_]+)` `(?P<change>[^`]+)` — (?P<reason>.+)\.$")


def _script():
    spec = importlib.util.spec_from_file_location("mutation_script", ROOT / "benchmarks" / "mutation.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def _entries():
    lines, inside = [], False
    for line in (ROOT / "DEVELOPERS.md").read_text().splitlines():
        if line.startswith("#"):
            inside = line.strip() == "### Equivalent mutants"
        elif inside and line.startswith("- `"):
            lines.append(line)
    return lines


def test_every_entry_names_a_module_a_change_and_a_reason():
    script = _script()
    entries = _entries()
    assert len(entries) >= 50
    listed = script.equivalent_mutants(ROOT / "DEVELOPERS.md")
    assert sum(len(changes) for changes in listed.values()) == len(set(entries))
    for line in entries:
        match = ENTRY.match(line)
        assert match, line
        assert match["module"] in script.MODULES, line
        before, after = match["change"].split(" | +", 1)  # the source itself may hold " | "
        assert before.startswith("-") and before[1:].strip() != after.strip(), line
        assert len(match["reason"].split()) >= 3, line


def test_every_entry_names_a_line_of_its_module_once_or_at_every_occurrence():
    script = _script()
    for line in _entries():
        match = ENTRY.match(line)
        path = ROOT / script.MODULES[match["module"]][0]
        source = [" ".join(text.split()) for text in path.read_text().splitlines()]
        before = " ".join(match["change"].split(" | +", 1)[0][1:].split())
        count = source.count(before)
        assert count >= 1, f"no longer in {path.name}: {line}"
        assert count == 1 or "every occurrence" in match["reason"], f"{count} times in {path.name}: {line}"
