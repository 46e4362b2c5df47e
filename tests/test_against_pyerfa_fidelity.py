"""Ephemeris-model accelerations against a direct sum with body positions from pyerfa.

References: pyerfa ``moon98`` (Moon about the Earth, GCRS), ``epv00`` (Earth about the Sun,
BCRS axes) and ``plan94`` (planets about the Sun, J2000 mean equator). Equation: Montenbruck &
Gill, *Satellite Orbits*, 2000, eq. 3.37 (from memory), written out below in numpy, the GMs
the model's own (cr3bp.systems / DE430 from memory). The bound is what the ephemeris accuracy
implies: the gradient of x/|x|^3 has norm at most 2/|x|^3, so a body position error ds gives
at most GM * 2 ds (1/|s - r|^3 + 1/|s|^3), and, as the direct and indirect terms move
together, also at most 24 GM ds |r| / (|s| - |r|)^4 (the third derivatives of 1/|x| contract
to at most 24/|x|^4 with unit vectors); the smaller of the two is used. The position errors are
the bounds on the differences between DE421 (the model's tables) and these pyerfa models, from
their published errors (cr3bp.time.ephemeris.ACCURACY: Moon/Earth 34.9 km, Sun/Earth 12.3 km,
Jupiter/Sun 352 510 km), plus 1 m for the Chebyshev fit (tests/test_fidelity.py).
"""

import warnings

import numpy as np
import pytest

erfa = pytest.importorskip("erfa")

from cr3bp.time import ephemeris as eph  # noqa: E402
from cr3bp import system  # noqa: E402
from cr3bp.fidelity import model as fm  # noqa: E402
from cr3bp.time.frames import _epoch  # noqa: E402

pytestmark = pytest.mark.filterwarnings("ignore::erfa.ErfaWarning")

def _bound(body, center):
    return eph.ACCURACY[(body, center, (1900, 2050))]["km"]


FIT_KM = 1e-3
# about the Moon every other body also carries the Moon's error (as before)
MOON_KM = _bound("moon", "earth")
ERR_KM = {"moon": MOON_KM + FIT_KM, "sun": _bound("sun", "earth") + MOON_KM + FIT_KM,
          "jupiter": _bound("jupiter", "sun") + _bound("sun", "earth") + MOON_KM + FIT_KM}


def _erfa_positions(ep):
    """Moon, Sun, Jupiter about the Earth, km, from pyerfa."""
    t1, t2 = ep.two_part_jd("tdb")
    moon = erfa.moon98(t1, t2)["p"] * eph.AU_KM
    pvh, _ = erfa.epv00(t1, t2)
    earth_h = pvh["p"] * eph.AU_KM
    jup_h = erfa.plan94(t1, t2, 5)["p"] * eph.AU_KM
    return {"moon": moon, "sun": -earth_h, "jupiter": jup_h - earth_h}


def _direct(r, gm_c, others):
    a = -gm_c * r / np.linalg.norm(r) ** 3
    bound = 0.0
    for gm, s, ds in others:
        d = s - r
        a += gm * (d / np.linalg.norm(d) ** 3 - s / np.linalg.norm(s) ** 3)
        rn, sn = np.linalg.norm(r), np.linalg.norm(s)
        b1 = gm * 2.0 * ds * (1.0 / np.linalg.norm(d) ** 3 + 1.0 / sn ** 3)
        b2 = 24.0 * gm * ds * rn / (sn - rn) ** 4 if sn > rn else np.inf
        bound += min(b1, b2)
    return a, bound


@pytest.mark.parametrize("central", ["moon", "earth"])
def test_accelerations_against_direct_sum(central):
    s = system("earth-moon")
    rng = np.random.default_rng(8)
    lu, tu = s.length_km, s.time_s
    acc_unit = lu / tu ** 2
    for _ in range(6):
        tdb = float(rng.uniform(-5, 40) * 365.25 * 86400.0)      # 1995 .. 2040
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            m = fm.build(s, tdb, 0.0, 0.5, central, "sun,earth,moon,jupiter")
        ep = _epoch(np.array([tdb]))
        pos = {k: v[0] for k, v in _erfa_positions(ep).items()}
        pos["earth"] = np.zeros(3)
        rel = {k: v - pos[central] for k, v in pos.items()}
        r_km = rng.normal(size=3)
        r_km *= rng.uniform(3000.0, 80000.0) / np.linalg.norm(r_km)
        state = np.concatenate([r_km / lu, np.zeros(3)])
        ours = m.acceleration(0.0, state)[3:] * acc_unit
        errs = {"moon": ERR_KM["moon"], "sun": ERR_KM["sun"], "jupiter": ERR_KM["jupiter"],
                "earth": ERR_KM["moon"]}
        others = [(fm.gm_km3_s2(b), rel[b], errs[b]) for b in ("sun", "earth", "moon", "jupiter")
                  if b != central]
        ref, bound = _direct(r_km, fm.gm_km3_s2(central), others)
        assert np.linalg.norm(ours - ref) <= bound, (central, tdb, np.linalg.norm(ours - ref), bound)
        # the check can fail: the perturbations are far larger than the bound
        assert np.linalg.norm(ref + fm.gm_km3_s2(central) * r_km / np.linalg.norm(r_km) ** 3) > 5 * bound
