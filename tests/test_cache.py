"""The compile cache: reused across cache objects (processes), and never trusting a bad entry."""

from __future__ import annotations

import json
import os
import pickle
import stat
import sys

import numpy as np
import pytest

from contin.systems._cache import CompileCache, cache_directory, cache_key
from contin.systems._symbolic import SymbolicSystem, symengine_available

BACKENDS = ["sympy", pytest.param("symengine", marks=pytest.mark.skipif(not symengine_available(), reason="symengine absent"))]
EQUATIONS = {"mass": "-x + Da*(1 - x)*exp(y)", "heat": "-y + 8*Da*(1 - x)*exp(y) - y"}
UNKNOWNS = {"x": 0.1, "y": 0.2}
PARAMETERS = {"Da": 0.05}


@pytest.fixture(autouse=True)
def no_environment(monkeypatch):
    monkeypatch.delenv("CONTIN_SYMBOLIC_BACKEND", raising=False)


def build(folder, backend):
    return SymbolicSystem(EQUATIONS, UNKNOWNS, PARAMETERS, backend=backend, cache=CompileCache(folder))


def entries(folder):
    return sorted(p for p in folder.iterdir() if p.suffix == ".entry")


def values(system):
    return system.evaluate(np.array([0.3, 1.2]), np.array([0.07]))


@pytest.mark.parametrize("backend", BACKENDS)
def test_second_build_comes_from_disk_and_agrees(tmp_path, backend):
    first = build(tmp_path, backend)
    assert first.cache_source == "built"
    assert len(entries(tmp_path)) == 1
    second = build(tmp_path, backend)  # a fresh cache object: what a second process sees
    assert second.cache_source == "disk"
    for a, b in zip(values(first), values(second), strict=True):
        np.testing.assert_array_equal(a, b)


def test_same_cache_object_remembers_in_memory(tmp_path):
    cache = CompileCache(tmp_path)
    SymbolicSystem(EQUATIONS, UNKNOWNS, PARAMETERS, cache=cache)
    assert SymbolicSystem(EQUATIONS, UNKNOWNS, PARAMETERS, cache=cache).cache_source == "memory"


def test_changed_equation_gets_a_new_entry(tmp_path):
    build(tmp_path, "sympy")
    changed = SymbolicSystem({**EQUATIONS, "heat": "-y + 9*Da*(1 - x)*exp(y) - y"}, UNKNOWNS, PARAMETERS,
                             backend="sympy", cache=CompileCache(tmp_path))
    assert changed.cache_source == "built" and len(entries(tmp_path)) == 2


def test_changed_constant_gets_a_new_entry(tmp_path):
    one = SymbolicSystem({"e": "k*u - p"}, {"u": 0.0}, {"p": 1.0}, {"k": 2.0}, backend="sympy", cache=CompileCache(tmp_path))
    two = SymbolicSystem({"e": "k*u - p"}, {"u": 0.0}, {"p": 1.0}, {"k": 3.0}, backend="sympy", cache=CompileCache(tmp_path))
    assert two.cache_source == "built"
    assert one.residual(np.array([1.0]), np.array([0.0]))[0] == 2.0
    assert two.residual(np.array([1.0]), np.array([0.0]))[0] == 3.0


def test_back_ends_do_not_share_entries():
    assert cache_key("sympy", "x") != cache_key("symengine", "x")


@pytest.mark.parametrize("backend", BACKENDS)
@pytest.mark.parametrize(
    "damage",
    ["flip a payload byte", "truncate", "garbage", "empty", "wrong version", "wrong checksum", "lose the secret"],
)
def test_bad_entry_is_discarded_and_rebuilt(tmp_path, backend, damage):
    reference = values(build(tmp_path, backend))
    (path,) = entries(tmp_path)
    data = path.read_bytes()
    newline = data.index(b"\n")
    header = json.loads(data[:newline])
    if damage == "flip a payload byte":
        position = newline + 1 + (len(data) - newline - 1) // 2
        data = data[:position] + bytes([data[position] ^ 0xFF]) + data[position + 1 :]
    elif damage == "truncate":
        data = data[: newline + 10]
    elif damage == "garbage":
        data = b"\x80\x04not a cache file at all"
    elif damage == "empty":
        data = b""
    elif damage == "wrong version":
        header["versions"]["sympy"] = "0.0.1"
        data = json.dumps(header).encode() + data[newline:]
    elif damage == "wrong checksum":
        header["checksum"] = "0" * 64
        data = json.dumps(header).encode() + data[newline:]
    elif damage == "lose the secret":
        (tmp_path / "secret.key").unlink()
    path.write_bytes(data)
    rebuilt = build(tmp_path, backend)
    assert rebuilt.cache_source == "built"
    for a, b in zip(reference, values(rebuilt), strict=True):
        np.testing.assert_array_equal(a, b)
    assert build(tmp_path, backend).cache_source == "disk"  # the rebuilt entry is good again


def test_planted_pickle_is_never_loaded(tmp_path, monkeypatch):
    """A pickle written by someone without the cache's secret must not be unpickled."""
    system = build(tmp_path, "symengine" if symengine_available() else "sympy")
    (path,) = entries(tmp_path)

    class Bomb:
        def __reduce__(self):
            return (sys.exit, ("the cache unpickled a planted file",))

    payload = pickle.dumps(Bomb())
    header = {"format": 1, "kind": "pickle", "versions": {}, "length": len(payload), "checksum": "f" * 64}
    path.write_bytes(json.dumps(header).encode() + b"\n" + payload)
    calls = []
    monkeypatch.setattr(pickle, "loads", lambda *a, **k: calls.append(a))
    rebuilt = build(tmp_path, system.backend)
    assert rebuilt.cache_source == "built" and calls == []


def test_secret_and_entries_are_private_to_the_owner(tmp_path):
    build(tmp_path, "sympy")
    mode = stat.S_IMODE(os.stat(tmp_path / "secret.key").st_mode)
    assert mode == 0o600


def test_no_temporary_files_are_left(tmp_path):
    build(tmp_path, "sympy")
    assert sorted(p.name for p in tmp_path.iterdir() if p.name.startswith(".tmp-")) == []


def test_sympy_entry_is_text_not_a_pickle(tmp_path):
    build(tmp_path, "sympy")
    (path,) = entries(tmp_path)
    payload = path.read_bytes().split(b"\n", 1)[1]
    document = json.loads(payload)
    assert set(document) == {"entries", "residual", "full"}


def test_directory_from_environment(monkeypatch, tmp_path):
    monkeypatch.setenv("CONTIN_CACHE_DIR", str(tmp_path / "here"))
    assert cache_directory() == tmp_path / "here"
    monkeypatch.setenv("CONTIN_CACHE_DIR", "off")
    assert cache_directory() is None
    monkeypatch.delenv("CONTIN_CACHE_DIR")
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "xdg"))
    assert cache_directory() == tmp_path / "xdg" / "contin"


def test_disk_cache_off_still_works(monkeypatch):
    monkeypatch.setenv("CONTIN_CACHE_DIR", "")
    system = SymbolicSystem(EQUATIONS, UNKNOWNS, PARAMETERS, backend="sympy", cache=CompileCache())
    assert system.cache_source == "built"
    assert np.all(np.isfinite(values(system)[0]))


def test_unwritable_folder_does_not_break_building(tmp_path):
    blocker = tmp_path / "file"
    blocker.write_text("not a folder")
    system = SymbolicSystem(EQUATIONS, UNKNOWNS, PARAMETERS, backend="sympy", cache=CompileCache(blocker / "cache"))
    assert system.cache_source == "built"


def test_text_entry_round_trips_every_allowed_function(tmp_path):
    equations = {
        "a": "abs(u) + max(u, v, p) - min(u, 2*v) + atan2(u, v) + u**(1/3)*v**2.5 + pi*E",
        "b": "sqrt(2 + u**2) + asinh(v) + acosh(2 + u**2) + atanh(v/3) + asin(u/4) + acos(v/4) + atan(u)",
        "c": "w*(exp(-u) + log(2 + v**2) + sin(u)*cos(v)*tan(w/5) + sinh(u)*cosh(v)*tanh(w)) - p/7",
    }
    unknowns, parameters = {"u": 0.4, "v": 0.3, "w": 0.2}, {"p": 0.1}
    first = SymbolicSystem(equations, unknowns, parameters, backend="sympy", cache=CompileCache(tmp_path))
    second = SymbolicSystem(equations, unknowns, parameters, backend="sympy", cache=CompileCache(tmp_path))
    assert (first.cache_source, second.cache_source) == ("built", "disk")
    for point in ([0.4, 0.3, 0.2], [0.7, 1.1, 0.9], [1.3, -0.2, -0.5]):
        u, p = np.array(point), np.array([0.1])
        for a, b in zip(first.evaluate(u, p), second.evaluate(u, p), strict=True):
            np.testing.assert_allclose(a, b, rtol=1e-15, atol=1e-15)


def test_text_entry_with_a_foreign_name_is_rebuilt(tmp_path, monkeypatch):
    """Even an entry that passes the checksum cannot smuggle a name into generated code."""
    build(tmp_path, "sympy")
    (path,) = entries(tmp_path)
    data = path.read_bytes()
    newline = data.index(b"\n")
    document = json.loads(data[newline + 1 :])
    document["full"][0].insert(0, ["__import__('os').system('echo owned')", "1"])
    payload = json.dumps(document).encode()
    cache = CompileCache(tmp_path)
    key = path.name[: -len(".entry")]
    cache.write(key, "text", payload)  # correctly signed: only the name check stands in the way
    monkeypatch.setattr(os, "system", lambda *a: pytest.fail("a cache entry ran a command"))
    rebuilt = SymbolicSystem(EQUATIONS, UNKNOWNS, PARAMETERS, backend="sympy", cache=cache)
    assert rebuilt.cache_source == "built"
