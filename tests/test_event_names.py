"""Event names: the usual words as aliases (catalogue events column and --kinds), maximum and
minimum of periodic targets, and default events that follow what the catalogue gives.

References: Winn 2010, "Transits and Occultations", in *Exoplanets* (ed. S. Seager), sec. 1: a
transit is the companion passing in front of the star (primary conjunction, the primary eclipse
of a binary), an occultation its passage behind (secondary conjunction, secondary eclipse).
Sterne 1939, MNRAS 99, 451 (from memory for the citation; relation as in Kopal 1959, *Close
Binary Systems*): for i = 90 deg the time from primary to secondary conjunction is
P/2 + (P/pi) [arctan(e cos w / sqrt(1 - e^2)) + e cos w sqrt(1 - e^2) / (1 - e^2 sin^2 w)].
HAT-P-2 b: Pal et al. 2010, MNRAS 401, 2665 (abstract): P = 5.6334729 d, e = 0.5171,
omega = 185.22 deg, Tc = 2454387.49375 BJD. delta Cephei light maxima: P = 5.366249 d,
max at JD 2436075.445 (GCVS, from memory); Algol primary minima: P = 2.8673043 d,
min at HJD 2445641.5135 (from memory). Inputs only, never checked values: HAT-P-2 b's a/R* 9.7,
inclination 86.7 deg, Rp/R* 0.0723 and K 983.9 m/s (from memory). The default events are
common practice (no source):
nothing photometric happens at apastron, RV extremes need an RV amplitude, eclipse-shaped
blocks need an eclipse.
"""

import warnings

import numpy as np
import pytest

from planner import cli
from planner.inputs import catalogue
from planner.orbits import geometry
from planner.orbits.events import predict_events

P, E, W_DEG, TC = 5.6334729, 0.5171, 185.22, 2454387.49375
HATP2 = f"HAT-P-2 b,16:20:36.36,+41:02:53.1,{P},{E},{W_DEG},{TC}"


def load(text):
    return catalogue.parse_catalogue(text, source="cat.csv")


def sterne_delay_d(period_d, e, omega_deg):
    w = np.radians(omega_deg)
    ecw = e * np.cos(w)
    return period_d / 2 + (period_d / np.pi) * (np.arctan(ecw / np.sqrt(1 - e**2))
                                                + ecw * np.sqrt(1 - e**2) / (1 - e**2 * np.sin(w) ** 2))


@pytest.mark.parametrize("words, expected", [
    ("transit;occultation", ("primary_conjunction", "secondary_conjunction")),
    ("Primary eclipse; secondary-eclipse", ("primary_conjunction", "secondary_conjunction")),
    ("secondary_eclipse;transit;primary_conjunction", ("secondary_conjunction", "primary_conjunction")),
])
def test_aliases_in_the_events_column(words, expected):
    t = load(f"name,ra,dec,period_d,e,omega_deg,tc,events\n{HATP2},{words}\n")
    assert t["events"][0] == expected
    ev = predict_events(t, TC - 0.01, TC + P - 0.01)
    times = dict(zip(ev.event, ev.bjd_tdb))
    assert set(times) == {"primary_conjunction", "secondary_conjunction"}
    # the occultation is where e and omega put it (Sterne's relation), not at phase 0.5
    assert abs(times["secondary_conjunction"] - times["primary_conjunction"] - sterne_delay_d(P, E, W_DEG)) <= 1e-8


def test_aliases_in_kinds(capsys):
    from conftest import SAMPLE_TARGETS

    outputs = {}
    for words in (["primary_conjunction", "secondary_conjunction"], ["transit", "occultation"],
                  ["primary_eclipse", "secondary_eclipse"]):
        assert cli.main(["events", str(SAMPLE_TARGETS), "--start", "2026-12-07", "--days", "30", "--format", "csv",
                         "--kinds", *words]) == 0
        outputs[tuple(words)] = capsys.readouterr().out
    first, *others = outputs.values()
    assert all(o == first for o in others) and first.count("\n") > 3
    with pytest.raises(SystemExit) as info:  # argparse's usage error
        cli.main(["events", str(SAMPLE_TARGETS), "--start", "2026-12-07", "--kinds", "ingress"])
    assert info.value.code == 2
    assert "unknown event 'ingress'" in capsys.readouterr().err


def test_maximum_and_minimum_of_periodic_targets():
    text = ("name,ra,dec,period_d,t0,label,events\n"
            "delta Cep,22:29:10.27,+58:24:54.7,5.366249,2436075.445,light maximum,\n"
            "Algol,03:08:10.13,+40:57:20.3,2.8673043,2445641.5135,,minimum\n")
    t = load(text)
    assert t["label"].tolist() == ["light maximum", "minimum"]  # the events column names Algol's kind
    assert [geometry.periodic_kind(x) for x in t["label"]] == ["maximum", "minimum"]
    start, end = 2461000.0, 2461030.0
    every = predict_events(t, start, end)
    maxima = predict_events(t, start, end, kinds=["maximum"])
    minima = predict_events(t, start, end, kinds=["minimum"])
    assert set(maxima.target) == {"delta Cep"} and set(minima.target) == {"Algol"}
    assert len(maxima) + len(minima) == len(every) == len(predict_events(t, start, end, kinds=["periodic"]))
    # times of the linear ephemerides T0 + n P
    n = np.ceil((start - 2436075.445) / 5.366249)
    assert abs(maxima.bjd_tdb.iloc[0] - (2436075.445 + n * 5.366249)) <= 1e-6
    # 'maximum' on an orbit, or against the label, is refused
    msgs = []
    for bad in (f"name,ra,dec,period_d,e,omega_deg,tc,events\n{HATP2},maximum\n",
                "name,ra,dec,period_d,t0,label,events\nX,10,20,1.5,2461000.1,Min I,maximum\n"):
        with pytest.raises(catalogue.InputErrors) as info:
            load(bad)
        msgs.append(str(info.value))
    assert "'maximum' is the event of a linear ephemeris" in msgs[0]
    assert "the events column says maximum but the label says 'Min I'" in msgs[1]


def test_default_events_follow_the_target():
    text = ("name,ra,dec,period_d,e,omega_deg,tc,k_ms,a_rstar,inc_deg,rp_rstar,duration_h\n"
            f"{HATP2},,9.7,86.7,0.0723,\n"            # eclipse geometry, no K (photometry)
            f"RV only,16:20:36.36,+41:02:53.1,{P},{E},{W_DEG},{TC},983.9,,,,\n"    # K, no eclipse
            f"Both,16:20:36.36,+41:02:53.1,{P},{E},{W_DEG},{TC},983.9,9.7,86.7,0.0723,\n"
            "Circular EB,10,20,3.2,0,,2461000.2,,,,,2.5\n"          # a duration only
            "Star companion,10,20,3.2,0,,2461000.2,,9.7,86.7,0.35,\n"  # a stellar radius ratio
            "Circular RV,10,20,3.2,0,,2461000.2,55,,,,\n"
            "Nearly circular RV,10,20,0.94,0.0091,269,2461000.2,1818,,,,\n")   # below NEAR_CIRCULAR_E
    t = load(text).set_index("name")
    # a photometric target's periastron shows nothing in its light curve: not a default; nor is
    # a planet's occultation (HAT-P-2 b's Rp/R* 0.0723, Pal et al. 2010: its occultation was
    # measured from space), while an eclipse geometry with a stellar radius ratio, or a duration
    # alone (an eclipsing binary's catalogue), asks for both eclipses
    assert t.loc["HAT-P-2 b", "events"] == ("primary_conjunction",)
    assert t.loc["RV only", "events"] == ("periastron", "apastron", "rv_max", "rv_min")
    assert t.loc["Both", "events"] == ("periastron", "primary_conjunction", "rv_max", "rv_min")
    assert t.loc["Circular EB", "events"] == ("primary_conjunction", "secondary_conjunction")
    assert t.loc["Star companion", "events"] == ("primary_conjunction", "secondary_conjunction")
    assert t.loc["Circular RV", "events"] == ("rv_max", "rv_min")
    # e = 0.009: its fastest RV swing is within 2 % of a circular orbit's, no periastron of its own
    assert t.loc["Nearly circular RV", "events"] == ("rv_max", "rv_min")
    assert not t["events_given"].any()


def test_events_beyond_the_defaults_when_asked():
    t = load(f"name,ra,dec,period_d,e,omega_deg,tc,events\n{HATP2},\nAsked,10,20,{P},{E},{W_DEG},{TC},apastron\n")
    assert t["events"].tolist() == [("periastron",), ("apastron",)]
    # the filter asks for the conjunctions: the target without an events column gets them
    ev = predict_events(t, TC - 0.01, TC + P - 0.01, kinds=["transit", "apastron"])
    assert sorted(zip(ev.target, ev.event)) == [("Asked", "apastron"), ("HAT-P-2 b", "apastron"),
                                                ("HAT-P-2 b", "primary_conjunction")]


def test_target_with_no_default_event_is_named_in_a_warning():
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        t = load("name,ra,dec,period_d,e,omega_deg,tc\nBare,10,20,3.2,0,,2461000.2\n")
    assert t["events"][0] == ()
    assert [str(w.message) for w in caught] == [
        "cat.csv: row 2: no event to predict (a circular or nearly circular orbit without k_ms, eclipse geometry or "
        "duration_h); "
        "name the wanted events in column events"]


def test_a_linear_ephemeris_given_as_tc_is_a_primary_conjunction():
    # HAT-P-2 b's transit ephemeris alone (Pal et al. 2010, abstract: P, Tc), without e and omega:
    # a linear ephemeris whose epoch column says primary conjunction; a t0 row without a label
    # stays 'periodic'
    t = load("name,ra,dec,period_d,tc,t0,duration_h\n"
             f"HAT-P-2 b,16:20:36.36,+41:02:53.1,{P},{TC},,4.3\n"
             "Puls,10,20,0.137,,2461000.1,\n")
    assert t["label"].tolist() == [geometry.LINEAR_TC_LABEL, "periodic"] == ["primary conjunction", "periodic"]
    start, end = 2461000.0, 2461030.0
    for word in ("transit", "primary_conjunction", "Primary eclipse"):
        kept = predict_events(t, start, end, kinds=[word])
        assert set(kept.target) == {"HAT-P-2 b"} and set(kept.event) == {"periodic"}
        n = np.ceil((start - TC) / P)
        assert abs(kept.bjd_tdb.iloc[0] - (TC + n * P)) <= 1e-6 and len(kept) == 6  # 30 d / 5.63 d
    assert predict_events(t, start, end, kinds=["maximum"]).empty
