"""Bifurcations into complex quadruples located on computed halo families, checked with a
monodromy propagated independently (scipy ``solve_ivp`` on the equations of
``tests/_independent_cr3bp.py``, over the whole period, eigenvalues by LAPACK).

The two non-trivial reciprocal pairs of a periodic orbit's monodromy either are real pairs
(stability indices real) or form a complex quadruple rho e^{+-i th}, e^{+-i th}/rho (indices
complex conjugates); they pass from one to the other where the two indices meet, the
discriminant (s1 - s2)^2 of the pairs' sums s = lambda + 1/lambda changing sign (Broucke,
"Stability of periodic orbits in the elliptic restricted three-body problem", AIAA J. 7, 1969;
for two elliptic pairs meeting on the unit circle, a Krein collision).

Where: the northern L1 halo families of the Sun-Jupiter and Pluto-Charon systems. A scan of the
computed members' indices found no complex quadruple along the Earth-Moon halo (L1, L2, L3),
vertical and axial (L1, L2) families, nor along the L1/L2 halo families of Sun-Earth and
Jupiter-Europa or the L1 halo family of Saturn-Titan. In both, just past the period-doubling crossing near the near-rectilinear
part of the family, the two indices are elliptic, meet, and leave the real axis. We know no
published value of these energies, so the location is checked independently: at orbits of the
family on either side of the located one (Jacobi constant +-1e-6) the independent discriminant
has opposite signs, and its linear root is the located Jacobi constant.
"""

import json

import numpy as np
import pytest

from cr3bp import system
from cr3bp.orbits import continuation, families, shooting
from librate_cli.main import main

import _independent_cr3bp as ind

#: system, members grown (past the crossing), bound on |C_located - C_independent|.
#: The bound is set by the library's monodromy, built from the half-period STM with the mirror
#: relation: for the Sun-Jupiter orbit the half-period STM reaches 1.2e5 and the product loses
#: about 5e-5 in the monodromy's entries (measured against the full-period scipy monodromy), i.e.
#: ~3e-3 in the discriminant, whose slope along the family is 2.7e4 per unit of Jacobi constant:
#: 1e-7. Measured: 3.3e-8 (Sun-Jupiter), 5e-12 (Pluto-Charon).
CASES = [("sun-jupiter", 170, 3e-7), ("pluto-charon", 40, 1e-9)]
STEP_C = 1e-6


def _family(name, members):
    return families.grow_family(system(name), "halo", "L1", "north",
                                stops=continuation.Stops(max_members=members))


@pytest.mark.parametrize("name,members,tol", CASES)
def test_complex_crossing_located_and_confirmed_by_an_independent_monodromy(name, members, tol):
    S = system(name)
    fam = _family(name, members)
    cx = [b for b in fam.bifurcations if b.kind == "complex"]
    assert len(cx) == 1
    b = cx[0]
    assert "not located" not in b.note and "complex quadruple" in b.note
    # the type as reported, with member and energy
    d = b.to_dict()
    assert d["type"] == "complex" and d["member_index"] == b.index and d["jacobi"] == b.orbit.jacobi
    # the family members on either side: real pairs before, a complex quadruple after (scipy)
    before, after = fam.members[b.index], fam.members[b.index + 1]
    D_before = ind.pair_discriminant(ind.monodromy(S.mu, before.state, before.period)[1])
    D_after = ind.pair_discriminant(ind.monodromy(S.mu, after.state, after.period)[1])
    assert D_before > 0 > D_after
    assert min(before.jacobi, after.jacobi) < b.orbit.jacobi < max(before.jacobi, after.jacobi)
    # the library's own indices agree on each side
    assert all(isinstance(v, float) for v in before.stability_indices)
    assert all(isinstance(v, complex) for v in after.stability_indices)
    # orbits of the family at C_b -+ 1e-6 (corrected with the Jacobi constant held), their
    # monodromies propagated independently over the full period
    side = np.sign(before.jacobi - after.jacobi)        # Jacobi constant on the "real" side
    Ds = []
    for dC in (side * STEP_C, -side * STEP_C):
        o = shooting.correct(S, b.orbit.state, b.orbit.period / 2.0, "xz", shooting.hold_jacobi(b.orbit.jacobi + dC))
        end, M = ind.monodromy(S.mu, o.state, o.period)
        assert np.abs(end - o.state).max() < 1e-9          # periodic by the independent propagation
        Ds.append(ind.pair_discriminant(M))
    assert Ds[0] > 0 > Ds[1]
    c_independent = b.orbit.jacobi + side * STEP_C * (Ds[0] + Ds[1]) / (Ds[0] - Ds[1])
    assert abs(c_independent - b.orbit.jacobi) < tol
    # at the crossing the four non-trivial multipliers lie on the unit circle (two elliptic pairs
    # meeting: a Krein collision), not on the real axis. Past a Krein collision the quadruple
    # leaves the circle like the square root of the distance along the family (the collision is
    # a branch point of the eigenvalues; Krein 1950, Moser 1958, from memory), so the closeness
    # to the circle that the location bound `tol` allows is k sqrt(tol), k measured here from
    # the member past the crossing: |rho - 1| = k sqrt(|C_after - C_b|).
    def off_circle(state, period):
        ev = np.linalg.eigvals(ind.monodromy(S.mu, state, period)[1])
        four = ev[np.argsort(np.abs(ev - 1.0))[2:]]
        return four, np.abs(np.abs(four) - 1.0).max()
    _, dev_after = off_circle(after.state, after.period)
    k = dev_after / np.sqrt(abs(after.jacobi - b.orbit.jacobi))
    four, dev = off_circle(b.orbit.state, b.orbit.period)
    assert dev < k * np.sqrt(tol) < 0.1 * dev_after
    assert np.all(np.abs(four.imag) > 0.5)


def test_complex_crossing_reported_by_librate_family(capsys):
    name, members, _ = CASES[1]
    fam = _family(name, members)
    b = [b for b in fam.bifurcations if b.kind == "complex"][0]
    rc = main(["family", "--system", name, "--family", "halo", "--point", "L1", "--branch", "north",
               "--members", str(members), "--format", "json", "-q"])
    out = capsys.readouterr()
    assert rc == 0, out.err
    d = json.loads(out.out)
    cx = [x for x in d["bifurcations"] if x["type"] == "complex"]
    assert len(cx) == 1
    assert cx[0]["member_index"] == b.index
    assert cx[0]["jacobi"] == pytest.approx(b.orbit.jacobi, abs=1e-12)
    assert cx[0]["period_days"] == pytest.approx(b.orbit.period_days, rel=1e-12)
    rc = main(["family", "--system", name, "--family", "halo", "--point", "L1", "--branch", "north",
               "--members", str(members), "-q"])
    out = capsys.readouterr().out
    assert f"complex after member {b.index}: Jacobi constant {b.orbit.jacobi:.10f}" in out
    assert "CAUTION" in out
