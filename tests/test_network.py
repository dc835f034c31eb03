"""A network of stations for one event: combined score and the greedy choice of stations."""

from __future__ import annotations

import pytest

from occplan.network import NetworkResult, StationResult, choose_stations, combined_score
from occplan.ranking import load_weights


def rec(name, lon, side="ingress", snr=10.0):
    return {"name": name, "feature": "edge", "weight": 1.0, "resolved_fraction": 1.0,
            "snr_per_element": snr, "side": side, "ring_longitude_deg": lon, "usable": True,
            "behind_planet": False, "resonance_radius_km": 117550.0, "resolvable": True,
            "achievable_resolution_km": 1.0}


def test_a_second_station_adds_by_longitude_diversity():
    """Each feature once over all stations; a station at the same ring longitude adds
    nothing, one at the opposite ansa adds in full (occplan.network's rule)."""
    w = load_weights()
    a = StationResult("a", [rec("Mimas 2:1 edge", 10.0)], {}, "")
    same = StationResult("same", [rec("Mimas 2:1 edge", 10.0)], {}, "")
    far = StationResult("far", [rec("Mimas 2:1 edge", 190.0)], {}, "")
    one = combined_score([a], w)
    assert combined_score([a, same], w) == pytest.approx(one)
    assert combined_score([a, far], w) == pytest.approx(2 * one)
    # monotone: adding a station never lowers the combined score
    assert combined_score([a, same, far], w) >= combined_score([a, far], w) - 1e-12


def test_greedy_choice_reports_marginal_gains():
    w = load_weights()
    st = [StationResult("a", [rec("f1", 0.0), rec("f2", 0.0)], {}, ""),
          StationResult("b", [rec("f1", 0.0)], {}, ""),
          StationResult("c", [rec("f1", 180.0), rec("f3", 0.0)], {}, "")]
    res = NetworkResult(st, w)
    picked = choose_stations(res, 3)
    assert [p[0] for p in picked][:2] == ["a", "c"]
    gains = [p[1] for p in picked]
    assert gains == sorted(gains, reverse=True)  # greedy: non-increasing marginal gains
    assert picked[-1][2] == pytest.approx(combined_score(st, w))


def test_network_command(cli, tmp_path):
    """The CLI evaluates a demo event from the demo's three invented stations."""
    import json

    from occplan.demo import scenario_dir

    out = tmp_path / "net.json"
    chart = tmp_path / "net.png"
    res = cli("network", "--body", "saturn", "--star", "36.00676 11.44189", "--vmag", "9.8",
              "--kmag", "6.1", "--sites", str(scenario_dir() / "stations.toml"),
              "--start", "2028-10-30T02:00Z", "--end", "2028-10-30T04:00Z", "--choose", "2",
              "--format", "json", "--out", str(out), "--chart", str(chart))
    assert res.exit_code == 0, res.output
    data = json.loads(out.read_text())
    chosen = [r for r in data["rows"] if r["choice"]]
    assert len(chosen) == 2 and chosen[0]["marginal_gain"] >= chosen[1]["marginal_gain"]
    assert data["meta"]["features"]
    assert chart.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def _rec(name, lon, snr=10.0, usable=True):
    return {"name": name, "feature": "edge", "side": "ingress", "weight": 1.0, "amplitude": 1.0,
            "resonance_radius_km": 117570.0, "resolvable": True, "behind_planet": False,
            "snr_per_element": snr, "achievable_resolution_km": 1.0, "resolved_fraction": 1.0,
            "ring_longitude_deg": lon, "usable": usable}


def test_expected_score_credits_a_redundant_station_by_hand():
    """Two stations crossing one edge at the same longitude: the combined score is v (the
    second adds nothing), but with each clear with probability p the pair expects
    (1 - (1 - p)^2) v against p v for one station (independent events; hand calculation)."""
    from occplan.network import StationResult, expected_score
    from occplan.ranking import load_weights

    w = load_weights()
    a = StationResult("a", [_rec("Mimas 2:1 edge", 10.0)], {}, "")
    b = StationResult("b", [_rec("Mimas 2:1 edge", 10.0)], {}, "")
    v = 100.0 / 125.0  # SNR 10, reference 5
    p = 0.6
    assert expected_score([a, b], w, 1.0) == pytest.approx(v)
    assert expected_score([a], w, p) == pytest.approx(p * v)
    assert expected_score([a, b], w, p) == pytest.approx((1 - (1 - p) ** 2) * v)


def test_season_choice_is_greedy_within_its_bound_and_exact_for_one():
    """A synthetic season of three events over four stations: the greedy season choice is
    exact for k = 1 (brute force) and within 1 - 1/e of the brute-force best for k = 2
    (Nemhauser, Wolsey & Fisher 1978)."""
    import itertools
    import math

    from occplan.network import season_stations
    from occplan.ranking import load_weights

    w = load_weights()
    rows = []
    layout = {"E1": {"n": [("A", 0.0)], "s": [("A", 0.0)], "e": [("A", 180.0), ("B", 90.0)]},
              "E2": {"w": [("C", 10.0)], "n": [("C", 100.0)]},
              "E3": {"e": [("D", 0.0)], "s": [("D", 30.0), ("C", 50.0)], "w": [("A", 270.0)]}}
    for ev, sites in layout.items():
        for site, feats in sites.items():
            rows.append({"star_id": ev, "site": site, "zones": [_rec(f, lon) for f, lon in feats]})
    sites = sorted({r["site"] for r in rows})

    def total(names):
        from occplan.network import StationResult, combined_score
        out = 0.0
        for ev in layout:
            st = [StationResult(r["site"], r["zones"], {}, "") for r in rows
                  if r["star_id"] == ev and r["site"] in names]
            out += combined_score(st, w)
        return out

    for k in (1, 2):
        picked, summary = season_stations(rows, k, w)
        best = max(total(c) for c in itertools.combinations(sites, k))
        got = picked[-1][2]
        assert got == pytest.approx(total([p[0] for p in picked]))
        if k == 1:
            assert got == pytest.approx(best)
        assert got >= (1 - 1 / math.e) * best - 1e-12
    assert summary["n"]["events"] == 2
