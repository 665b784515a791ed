"""The contributor guide's list of equivalent mutants is well formed and still names real lines.

benchmarks/mutation.py counts a surviving mutant as equivalent when its change is listed under
"Equivalent mutants" in DEVELOPERS.md. Each entry must name a module of the script, give a source line
and its mutated form, say why no test can tell them apart, and point at a line that is in the source
now: once, or at every occurrence equivalent (said in the reason).
"""

import importlib.util
import pathlib

ROOT = pathlib.Path(__file__).resolve().parents[1]


def _script():
    spec = importlib.util.spec_from_file_location("mutation_script", ROOT / "benchmarks" / "mutation.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_every_entry_names_a_module_a_change_and_a_reason():
    script = _script()
    entries = script.guide_entries(ROOT / "DEVELOPERS.md")
    assert len(entries) >= 50
    assert len(set(entries)) == len(entries), "an entry is listed twice"
    listed = script.equivalent_mutants(ROOT / "DEVELOPERS.md")
    assert sum(len(changes) for changes in listed.values()) == len(entries)  # one reason per change
    for entry in entries:
        assert isinstance(entry, tuple), f"not an entry: {entry}"
        module, change, reason = entry
        assert module in script.MODULES, entry
        before, after = change.split(" | +", 1)  # the source itself may hold " | "
        assert before.startswith("-") and before[1:].strip() != after.strip(), entry
        assert len(reason.split()) >= 3, entry


def test_every_entry_names_a_line_of_its_module_once_or_at_every_occurrence():
    script = _script()
    for module, change, reason in script.guide_entries(ROOT / "DEVELOPERS.md"):
        path = ROOT / script.MODULES[module][0]
        source = [" ".join(text.split()) for text in path.read_text().splitlines()]
        before = " ".join(change.split(" | +", 1)[0][1:].split())
        count = source.count(before)
        assert count >= 1, f"no longer in {path.name}: {change}"
        assert count == 1 or "every occurrence" in reason, f"{count} times in {path.name}: {change}"
