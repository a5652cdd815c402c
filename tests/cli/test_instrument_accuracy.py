"""`instruments add --accuracy` as a user types it, and the verdict it changes. Intervals by
hand arithmetic from the maker's figure (CHECKS.md, "Measurement uncertainty"); B16 Zs,max =
230 × 0.95 / 80 = 2.73 Ω, cold margin 80 % → 2.185 Ω."""

import json

import pytest


def _add(cli, serial, *extra):
    return cli("instruments", "add", "--serial", serial, "--make", "Keelson", "--model", "MT-5",
               "--calibration-due", "2099-01-01", *extra)


def test_add_with_accuracy_is_listed(cli):
    r = _add(cli, "MFT-1", "--accuracy", "±(0.5 % + 2 digits)", "--accuracy-as", "bound")
    assert r.exit_code == 0, r.stderr
    assert "±(0.5 % + 2 digits)" in r.stdout and "bound" in r.stdout
    data = json.loads(cli("instruments", "list", "--json").stdout)
    assert data[0]["accuracy"] == {"text": "±(0.5 % + 2 digits)", "read_as": "bound"}


@pytest.mark.parametrize("extra,needle", [
    (["--accuracy", "±(0.5 % + 2 digits)"], "--accuracy-as"),
    (["--accuracy", "±(0.5 % + 2 digits)", "--accuracy-as", "maybe"], "'bound'"),
    (["--accuracy", "about half a percent", "--accuracy-as", "k2"], "--accuracy:"),
    (["--accuracy-as", "k2"], "give it with --accuracy"),
])
def test_bad_accuracy_is_one_line_exit_2(cli, extra, needle):
    r = _add(cli, "MFT-2", *extra)
    assert r.exit_code == 2
    assert needle in r.stderr and len(r.stderr.strip().splitlines()) == 1
    assert json.loads(cli("instruments", "list", "--json").stdout) == []  # nothing half-added


def test_zs_near_the_margin_becomes_review_with_the_interval(cli, tmp_path):
    """Same job and reading, two testers: without a stated accuracy 2.17 Ω passes (and the
    record says no uncertainty was applied); with ±(2 % + 3 digits) as a bound it is review
    with 2.17 ± 0.085 Ω shown."""
    _add(cli, "PLAIN-1")
    _add(cli, "ACC-1", "--accuracy", "≤ 20 Ω: ±(2 % + 3 digits)", "--accuracy-as", "bound")
    results = {}
    for serial in ("PLAIN-1", "ACC-1"):
        out = cli("new", "--checklist", "diverter-1ph", "--site", f"Site {serial}")
        job = out.stdout.strip().split()[-1]
        answers = tmp_path / f"{serial}.yaml"
        answers.write_text(
            "supply.earthing: TN-C-S\nprotection.breaker.curve: B\n"
            "protection.breaker.rating: 16 A\n"
            f"earth.zs: {{text: '2.17 Ω', instrument: {serial}}}\n", encoding="utf-8")
        assert cli("walk", job, "--answers", answers).exit_code == 0
        data = json.loads(cli("show", job, "--json").stdout)
        results[serial] = next(i for i in data["items"] if i["id"] == "earth.zs")
    assert results["PLAIN-1"]["verdict"] == "pass"
    assert "no uncertainty applied" in results["PLAIN-1"]["reason"]
    assert results["ACC-1"]["verdict"] == "review"
    assert "2.17 ± 0.085 Ω" in results["ACC-1"]["reason"]
