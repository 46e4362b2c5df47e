"""The DE421 ephemeris against jplephem reading the same kernel (test extra only).

Reference: jplephem (Brandon Rhodes' reader of JPL's SPK files; test-only dependency), opened
on the very file our code reads (``de421.bsp`` of the skyfield-data package). Each body is
the sum of jplephem's segments along its chain from the solar-system barycentre (Sun 10,
Earth-Moon barycentre 3, Earth 3+399, Moon 3+301, Mercury 1+199, Venus 2+299, Mars 4+499,
Jupiter .. Neptune system barycentres 5..8); jplephem's velocities (km/day) are divided by
86400. Tolerances: one metre and one millimetre per second at random epochs over the
kernel's span. Both evaluate the same polynomials, so the differences are rounding
(measured: below 2 mm for Neptune about the Earth, below 0.1 mm for the Moon).

The old analytic series (model="series", the default before DE421) is off by far more
(measured every 66 minutes over 2000-2049: Moon 27 km, Sun about the Earth 16 500 km,
Jupiter 1.9 million km): the same checks on it fail, which the last test shows.
"""

import numpy as np
import pytest

spk = pytest.importorskip("jplephem.spk")

from cr3bp.time import ephemeris as eph  # noqa: E402
from cr3bp.time import ephemeris_tables as tables  # noqa: E402
from cr3bp.time.scales import Epoch  # noqa: E402

ONE_METER = 1e-3            # km
ONE_MM_PER_S = 1e-6         # km/s
SECONDS_PER_DAY = 86400.0

#: Kernel segments (centre, target; JPL's integer body codes) summed for each body, from the solar-system barycentre.
CHAINS = {
    "ssb": [], "sun": [(0, 10)], "emb": [(0, 3)], "earth": [(0, 3), (3, 399)],
    "moon": [(0, 3), (3, 301)], "mercury": [(0, 1), (1, 199)], "venus": [(0, 2), (2, 299)],
    "mars": [(0, 4), (4, 499)], "jupiter": [(0, 5)], "saturn": [(0, 6)], "uranus": [(0, 7)],
    "neptune": [(0, 8)],
}


@pytest.fixture(scope="module")
def kernel():
    k = spk.SPK.open(tables.kernel_path())
    yield k
    k.close()


@pytest.fixture(scope="module")
def epochs():
    """500 random TDB instants over 1899-07-29 .. 2053-10-09, as two-part Julian dates."""
    rng = np.random.default_rng(421)
    jd = rng.uniform(2414864.5, 2471184.5, 500)
    e = Epoch.from_jd(np.floor(jd - 0.5) + 0.5, jd - (np.floor(jd - 0.5) + 0.5), "tdb")
    return e


def _reference(kernel, body, epochs):
    jd1, jd2 = epochs.two_part_jd("tdb")
    out = np.zeros((jd1.size, 6))
    for center, target in CHAINS[body]:
        p, v = kernel[center, target].compute_and_differentiate(jd1, jd2)
        out[:, :3] += p.T
        out[:, 3:] += v.T / SECONDS_PER_DAY
    return out


def test_kernel_is_the_checked_file():
    """The package's file is the one this code was checked on (SHA-256 recorded in
    cr3bp.time.ephemeris_tables), and its segments are what both readers see."""
    assert tables.sha256(tables.kernel_path()) == tables.KERNEL_SHA256
    k = spk.SPK.open(tables.kernel_path())
    try:
        pairs = {(s.center, s.target) for s in k.segments}
    finally:
        k.close()
    wanted = {pair for chain in CHAINS.values() for pair in chain}
    assert wanted <= pairs


PAIRS = [(b, c) for c in ("ssb", "sun", "earth", "moon") for b in eph.BODIES if b != c]


@pytest.mark.parametrize("body,center", PAIRS)
def test_every_body_within_one_metre(kernel, epochs, body, center):
    ref = _reference(kernel, body, epochs) - _reference(kernel, center, epochs)
    ours = eph.state(body, epochs, center)
    assert np.max(np.linalg.norm(ours[:, :3] - ref[:, :3], axis=1)) < ONE_METER
    assert np.max(np.linalg.norm(ours[:, 3:] - ref[:, 3:], axis=1)) < ONE_MM_PER_S
    # and the position-only path gives the same positions
    assert np.max(np.abs(eph.position(body, epochs, center) - ours[:, :3])) < 1e-9


def test_ecliptic_axes(kernel, epochs):
    """The J2000 ecliptic is the kernel's frame turned by the IAU 2006 obliquity."""
    ref = _reference(kernel, "moon", epochs) - _reference(kernel, "earth", epochs)
    m = eph.ecliptic_to_equator_matrix()
    ours = eph.state("moon", epochs, "earth", frame="j2000-ecliptic")
    assert np.max(np.abs(ours[:, :3] @ m.T - ref[:, :3])) < ONE_METER
    assert np.max(np.abs(ours[:, 3:] @ m.T - ref[:, 3:])) < ONE_MM_PER_S


def test_span_ends(kernel):
    """The first and last instants of the kernel are accepted and agree; one second beyond
    either end is refused."""
    lo, hi = eph.valid_interval("sun", "ssb")
    ends = Epoch.from_jd(np.array([2414864.5, 2471184.5]), 0.0, "tdb")
    assert lo.jd("tdb") == 2414864.5 and hi.jd("tdb") == 2471184.5
    ref = _reference(kernel, "sun", ends)
    assert np.max(np.abs(eph.state("sun", ends, "ssb") - ref)[:, :3]) < ONE_METER
    from cr3bp.errors import EphemerisSpanError
    with pytest.raises(EphemerisSpanError):
        eph.position("sun", ends[1] + 1.0, "ssb")


@pytest.mark.parametrize("body,center,km_at_least", [("moon", "earth", 5.0), ("sun", "earth", 5000.0),
                                                     ("jupiter", "sun", 500000.0)])
def test_the_analytic_series_fails_these_checks(kernel, body, center, km_at_least):
    """The former default, the analytic series, misses DE421 by kilometres to millions of km
    over 2000-2049 (so the checks above can fail; 2000 random epochs here: 17 km, 16 000 km,
    1.9 million km)."""
    rng = np.random.default_rng(49)
    jd = rng.uniform(2451544.5, 2469807.5, 2000)
    e = Epoch.from_jd(np.floor(jd - 0.5) + 0.5, jd - (np.floor(jd - 0.5) + 0.5), "tdb")
    ref = _reference(kernel, body, e) - _reference(kernel, center, e)
    old = eph.state(body, e, center, model="series")
    assert np.max(np.linalg.norm(old[:, :3] - ref[:, :3], axis=1)) > km_at_least
