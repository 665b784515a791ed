"""Problem files that follow a fold in two parameters or explore every branch: `contin run` prints
several branches and their diagram.

u^3 - a u + p = 0: fold curve 27 p^2 = 4 a^3 with a cusp at a = p = 0 (exact).
"""

from __future__ import annotations

import json

import pytest

from contin.commands._cli import main
from contin.base._errors import InputError
from contin.systems._problem import load_problem

CUSP = """
[unknowns]
u = -1.5
[parameters]
p = 1.875
a = 1.0
[equations]
cubic = "u**3 - a*u + p"
[trace]
free = ["p", "a"]
follow = "fold"
direction = -1
bounds = { p = [-2.0, 2.0] }
max_step = 0.2
"""


def test_follow_in_a_problem_file_prints_the_branch_then_the_fold_curve_and_the_diagram(tmp_path, capsys):
    path = tmp_path / "cusp.toml"
    path.write_text(CUSP)
    assert main(["run", str(path), "--json"]) == 0
    document = json.loads(capsys.readouterr().out)
    first, *curves = document["branches"]
    assert first["columns"] == ["u", "p"] and len(curves) == 2
    assert all(curve["columns"] == ["u", "p", "a"] for curve in curves)
    for curve in curves:
        for u, p, a in curve["points"]:
            assert 27 * p**2 == pytest.approx(4 * a**3, abs=1e-8)
    cusps = [sp for curve in curves for sp in curve["special_points"] if sp["kind"] == "cusp"]
    assert len(cusps) == 1
    assert cusps[0]["values"]["a"] == pytest.approx(0.0, abs=1e-8)
    assert cusps[0]["values"]["p"] == pytest.approx(0.0, abs=1e-8)
    kinds = {node["kind"] for node in document["diagram"]["nodes"]}
    assert {"fold", "cusp"} <= kinds
    assert {edge["branch"] for edge in document["diagram"]["edges"]} == {0, 1, 2}


def test_explore_in_a_problem_file_follows_every_branch_of_a_pitchfork(tmp_path, capsys):
    # u (p - u^2) = 0: the trivial branch u = 0 and the parabola p = u^2 meet at the origin.
    path = tmp_path / "pitchfork.toml"
    path.write_text('[unknowns]\nu = 0.0\n[parameters]\np = -1.0\n[equations]\nf = "u*(p - u**2)"\n'
                    '[trace]\nfree = "p"\nexplore = true\nmax_branches = 4\nbounds = { p = [-1.0, 1.0], u = [-2.0, 2.0] }\n')
    assert main(["run", str(path), "--json"]) == 0
    document = json.loads(capsys.readouterr().out)
    assert len(document["branches"]) >= 2
    on_parabola = [b for b in document["branches"][1:] if any(abs(u) > 0.5 for u, p in b["points"])]
    assert on_parabola and all(p == pytest.approx(u * u, abs=1e-8) for b in on_parabola
                               for u, p in b["points"] if abs(u) > 1e-6)


@pytest.mark.parametrize("change, message", [
    (('follow = "fold"', 'follow = "hopf"'), 'needs kind = "ode"'),
    (('follow = "fold"', 'follow = "turn"'), 'use "fold" or "hopf"'),
    (('free = ["p", "a"]', 'free = ["p", "p"]'), "names 'p' twice"),
    (('free = ["p", "a"]', 'free = ["p", "b"]'), "names 'b', which is not a declared parameter"),
    (('free = ["p", "a"]', 'free = "p"'), "must name two parameters"),
    (('follow = "fold"', 'follow = "fold"\nexplore = true'), "follow and explore both given"),
    (('follow = "fold"', 'start_at = 3'), "start_at goes with follow"),
])
def test_bad_curve_keys_are_refused(tmp_path, change, message):
    path = tmp_path / "cusp.toml"
    path.write_text(CUSP.replace(*change))
    with pytest.raises(InputError, match=message):
        load_problem(path)


def test_following_a_point_the_branch_lacks_is_refused(tmp_path, capsys):
    path = tmp_path / "cusp.toml"
    path.write_text(CUSP.replace("direction = -1", "direction = 1"))  # away from both folds
    assert main(["run", str(path)]) == 2
    assert "has no fold in p to follow" in capsys.readouterr().err
    path.write_text(CUSP.replace('follow = "fold"', 'follow = "fold"\nstart_at = 5'))
    assert main(["run", str(path)]) == 2
    assert "start_at = 5 is not the point number of a fold in p" in capsys.readouterr().err
