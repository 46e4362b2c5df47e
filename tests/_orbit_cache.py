"""Families computed once per test session and shared by the orbit test files (keeps the
orbit tests fast: each family is grown a single time)."""

from functools import lru_cache

from cr3bp import system
from cr3bp.orbits import continuation, families


@lru_cache(maxsize=None)
def em():
    return system("earth-moon")


@lru_cache(maxsize=None)
def lyapunov(point, branch_points=1, max_members=200):
    return families.grow_family(em(), "lyapunov", point,
                                stops=continuation.Stops(max_members=max_members, branch_points=branch_points))


@lru_cache(maxsize=None)
def halo(point, branch, max_members=12):
    return families.grow_family(em(), "halo", point, branch, stops=continuation.Stops(max_members=max_members))


@lru_cache(maxsize=None)
def nrho_9_2():
    from cr3bp.orbits.request import solve_request
    return solve_request(em(), "halo L2 south resonance=9:2")


@lru_cache(maxsize=None)
def dro(max_members=40):
    return families.grow_family(em(), "dro", stops=continuation.Stops(max_members=max_members))


@lru_cache(maxsize=None)
def vertical(point, max_members=8):
    return families.grow_family(em(), "vertical", point, stops=continuation.Stops(max_members=max_members))


def sample_members():
    """A spread of converged members of several families (for the monodromy checks)."""
    out = []
    for fam in (lyapunov("L1"), halo("L1", "north"), halo("L2", "south"), dro(), vertical("L1")):
        ms = fam.members
        out += [ms[0], ms[len(ms) // 2], ms[-1]]
    out.append(nrho_9_2())
    return out


@lru_cache(maxsize=None)
def axial_from_lyapunov(point, max_members=200):
    """The axial family branched at the Lyapunov family's second out-of-plane branch point, grown
    past its junction with the vertical family (member ~140 at L1, ~111 at L2)."""
    fam, _ = families.branch_family(em(), "axial", point, stops=continuation.Stops(max_members=max_members))
    return fam


@lru_cache(maxsize=None)
def vertical_to_branch_point(point):
    """The vertical family from its linear seed up to its first +1 crossing."""
    return families.grow_family(em(), "vertical", point,
                                stops=continuation.Stops(max_members=400, branch_points=1))
