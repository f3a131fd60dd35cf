"""Help texts and misspelt options of every verb (issue 17): each option's
argument is named after the option (no one-letter placeholders), the help
column is aligned (a long option gets its help on the next line), a misspelt
option is answered with the closest one, and the -ize spelling of an option
spelt -ise is accepted."""
import re

import pytest

from conftest import run

VERBS = ["plan", "pattern", "encode", "recon", "score", "render", "sweep", "demo"]


@pytest.mark.parametrize("verb", VERBS)
def test_help_columns_align_and_name_their_arguments(verb):
    p = run(verb, "--help")
    lines = p.stdout.splitlines()
    opts = lines[lines.index("Options:") + 1:]
    assert opts, p.stdout
    i = 0
    while i < len(opts):
        line = opts[i]
        m = re.match(r"  (--[a-z0-9-]+)( [A-Z0-9_]+)?(?:( {2,})(\S.*))?$", line)
        assert m, f"{verb}: {line!r}"
        if m.group(2):   # the placeholder is the option's name in capitals
            assert m.group(2).strip() == m.group(1)[2:].upper().replace("-", "_") or \
                m.group(1) == "--max-memory", line
        if m.group(4) is None:
            i += 1       # the help on the next line, in the column
            assert re.match(r" {27}\S", opts[i]), f"{verb}: {opts[i]!r}"
        else:
            assert line.index(m.group(4)) == 27, f"{verb}: {line!r}"
        i += 1


@pytest.mark.parametrize("verb,typo,meant", [
    ("plan", "--bandwith", "--bandwidth"),
    ("recon", "--lamda", "--lambda"),
    ("encode", "--phantm", "--phantom"),
    ("pattern", "--kidn", "--kind"),
])
def test_a_misspelt_option_names_the_closest(verb, typo, meant):
    p = run(verb, typo, "1", check=False)
    assert p.returncode == 2
    assert p.stderr.strip() == f"kweave: error: {typo}: unknown option; did you mean {meant}? (see --help)"


def test_an_unrelated_option_has_no_suggestion():
    p = run("recon", "--zzzzzzzz", "1", check=False)
    assert p.returncode == 2
    assert "did you mean" not in p.stderr


def test_analyze_is_analyse(tmp_path):
    run("pattern", "--kind", "uniform", "--matrix", "32x32", "--accel", "2", "--out", tmp_path / "m.npy")
    a = run("pattern", "--analyse", tmp_path / "m.npy", "--json", tmp_path / "a.json")
    b = run("pattern", "--analyze", tmp_path / "m.npy", "--json", tmp_path / "b.json")
    assert a.stdout == b.stdout
    assert (tmp_path / "a.json").read_text() == (tmp_path / "b.json").read_text()


def test_unknown_kind_lists_the_kinds():
    p = run("pattern", "--kind", "poison", "--matrix", "64", check=False)
    assert p.returncode == 2
    assert p.stderr.strip() == ("kweave: error: kind: unknown kind 'poison' (full, partial, uniform, "
                                "random, poisson, lattice, radial, golden, stack-of-stars, spiral, epi)")


def test_a_field_without_tabulated_times_names_the_tissue_option(tmp_path):
    p = run("encode", "--phantom", "weave", "--matrix", "32", "--fov", "256mm", "--b0", "7T",
            "--out", tmp_path / "k.npy", check=False)
    assert p.returncode == 2
    assert "--tissue FILE.json" in p.stderr and "--tissue list" in p.stderr
    assert not (tmp_path / "k.npy").exists()


def test_the_failing_line_is_a_sentence():
    import os
    proto = os.path.join(os.path.dirname(__file__), "..", "..", "samples", "weave-too-thin.protocol")
    p = run("plan", "--protocol", proto, check=False)
    assert p.returncode == 3
    line = next(l for l in p.stdout.splitlines() if l.startswith("Feasible: NO. Failing:"))
    assert line.endswith(").") and not line.endswith(";") and "); te (" in line
