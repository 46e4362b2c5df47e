"""JPL's DE421 Chebyshev tables: read from the kernel file, evaluated by vectorised numpy.

Source: the planetary and lunar ephemeris DE421 (W. M. Folkner, J. G. Williams & D. H. Boggs,
"The Planetary and Lunar Ephemeris DE 421", JPL IPN Progress Report 42-178, 2009), as the
binary kernel ``de421.bsp`` shipped by the PyPI data package ``skyfield-data`` (a runtime
dependency: a 17 MB wheel holding the file as JPL distributes it; the ``de421`` package holds
the same coefficients as 27 MB of numpy arrays, plus nutations and librations we do not use).

File layout (JPL's published description of its double-precision array files, DAF, and of
their ephemeris segments, SPK, type 2): a 1024-byte file record (``DAF/SPK``, ND = 2 doubles
and NI = 6 integers per segment summary, the first summary record, ``LTL-IEEE`` byte order),
then summary records
(next, previous, count, then per segment: start and end in TDB seconds past J2000, target,
centre, frame, type, first and last 8-byte word address), then the segments' words. A type 2
segment is a run of equal records (midpoint, radius, then the Chebyshev coefficients of x, y
and z, km) closed by four words: start of the first record, record length in seconds, words
per record, number of records. Each record covers ``[init + i len, init + (i + 1) len]``; the
position is ``sum_k c_k T_k(s)`` with ``s = 2 (t - t_i) / len - 1``, and the velocity is its
derivative, ``sum_k c_k T_k'(s) 2 / len`` (km/s): the kernel holds positions only.

Evaluation: per epoch the record index and offset come from the two-part TDB Julian date
(whole days times 86400 and the start of the segment are integers, so only the day fraction
rounds: about 1e-11 s), then ``T_k`` and ``T_k'`` by their three-term recurrences on arrays of
epochs (``T_{k+1} = 2 s T_k - T_{k-1}``, ``T_{k+1}' = 2 T_k + 2 s T_k' - T_{k-1}'``), in
blocks of :data:`CHUNK` epochs so that the gathered coefficients stay small.

Axes: the kernel's frame 1, J2000 as realised by the ICRF for DE421 (Folkner et al. 2009).
"""

from __future__ import annotations

import hashlib
import importlib.util
import os
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from ..constants import J2000_JD, SECONDS_PER_DAY
from ..errors import LibrateError

#: The kernel as shipped by the data package, and the SHA-256 of the copy this code was
#: checked on (skyfield-data 7.0.0; tests/test_against_jplephem.py asserts it).
PACKAGE = "skyfield-data"
KERNEL_NAME = "de421.bsp"
KERNEL_SHA256 = "a20a7139da04cbc462454634918e9a9ca69127044e2cc9d4f9c16e238d2deedc"
CHUNK = 32768                     # epochs per block: gathered coefficients stay a few MB
RECORD_BYTES = 1024
WORD = np.dtype("<f8")

#: JPL's integer body codes: barycentres 1-9 (Mercury .. Pluto systems; 3 = Earth-Moon), 10 the
#: Sun, 199/299/399/499 Mercury, Venus, the Earth and Mars, 301 the Moon, 0 the solar-system
#: barycentre. Each body as the chain of segments summed from the barycentre (the planet
#: offsets 199, 299 and 499 are zero in DE421, but they are in the file and kept).
CHAINS = {
    "ssb": (),
    "sun": (10,),
    "mercury": (1, 199),
    "venus": (2, 299),
    "emb": (3,),
    "earth": (3, 399),
    "moon": (3, 301),
    "mars": (4, 499),
    "jupiter": (5,),
    "saturn": (6,),
    "uranus": (7,),
    "neptune": (8,),
}
#: Centre of each segment in the file (target -> centre).
CENTER_OF = {1: 0, 2: 0, 3: 0, 4: 0, 5: 0, 6: 0, 7: 0, 8: 0, 10: 0, 199: 1, 299: 2, 301: 3, 399: 3,
             499: 4}


class KernelError(LibrateError):
    """The DE421 kernel file is missing, unreadable or not the layout this module reads.

    Parameters
    ----------
    *args : str
        The message (a one-line statement of what is wrong and what to do).

    Examples
    --------
    >>> issubclass(KernelError, LibrateError)
    True

    References
    ----------
    Folkner, W. M., Williams, J. G. & Boggs, D. H., "The Planetary and Lunar Ephemeris DE 421",
    JPL IPN Progress Report 42-178 (2009).
    """


@dataclass(frozen=True)
class Segment:
    """One type 2 segment: records (n, 2 + 3 m) of (mid, radius, x coefs, y coefs, z coefs).

    Parameters
    ----------
    target, center : int
        The body numbers of the segment (:data:`CENTER_OF`).
    start_s, end_s : float
        Coverage, TDB seconds past J2000.
    init_s : float
        Start of the first record.
    length_s : float
        Record length, s.
    records : numpy.ndarray
        (n_records, words per record), a read-only view of the file.

    Examples
    --------
    >>> kernel().segments[301].n_coef
    13

    References
    ----------
    Folkner, W. M., Williams, J. G. & Boggs, D. H., "The Planetary and Lunar Ephemeris DE 421",
    JPL IPN Progress Report 42-178 (2009); the file layout as described in the module notes.
    """

    target: int
    center: int
    start_s: float          # TDB seconds past J2000, coverage
    end_s: float
    init_s: float           # start of the first record
    length_s: float         # record length
    records: np.ndarray     # (n_records, words per record), a read-only view of the file

    @property
    def n_coef(self) -> int:
        return (self.records.shape[1] - 2) // 3


@dataclass(frozen=True)
class Kernel:
    """The opened kernel: its path, its segments by target and their common coverage.

    Parameters
    ----------
    path : str
        The file.
    segments : dict
        Target number -> :class:`Segment`.
    start_s, end_s : float
        Common coverage of every segment, TDB seconds past J2000.

    Examples
    --------
    >>> sorted(kernel().segments)[:3]
    [1, 2, 3]

    References
    ----------
    Folkner, W. M., Williams, J. G. & Boggs, D. H., "The Planetary and Lunar Ephemeris DE 421",
    JPL IPN Progress Report 42-178 (2009).
    """
    path: str
    segments: dict          # target -> Segment
    start_s: float          # common coverage of every segment
    end_s: float


def kernel_path() -> str:
    """Path of ``de421.bsp`` inside the installed ``skyfield-data`` package.

    Returns
    -------
    str
        The file's path.

    Raises
    ------
    KernelError
        The package is not installed (it is a runtime dependency of librate), or the file is
        missing from it.

    Examples
    --------
    >>> kernel_path().endswith("de421.bsp")
    True

    References
    ----------
    Folkner, W. M., Williams, J. G. & Boggs, D. H., "The Planetary and Lunar Ephemeris DE 421",
    JPL IPN Progress Report 42-178 (2009).
    """
    spec = importlib.util.find_spec("skyfield_data")
    if spec is None or not spec.submodule_search_locations:
        raise KernelError(f"the JPL DE421 kernel comes from the Python package '{PACKAGE}', which "
                          f"is not installed; install it (pip install {PACKAGE})")
    path = os.path.join(list(spec.submodule_search_locations)[0], "data", KERNEL_NAME)
    if not os.path.isfile(path):
        raise KernelError(f"{path} is missing from the installed '{PACKAGE}' package; reinstall it")
    return path


def sha256(path: str) -> str:
    """SHA-256 of a file, as hexadecimal text (read in 1 MiB blocks).

    Parameters
    ----------
    path : str
        The file.

    Returns
    -------
    str
        64 hexadecimal digits.

    Raises
    ------
    OSError
        The file cannot be read.

    Examples
    --------
    >>> len(sha256(kernel_path()))
    64

    References
    ----------
    NIST FIPS 180-4, "Secure Hash Standard (SHS)" (2015).
    """
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for block in iter(lambda: f.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


@lru_cache(maxsize=1)
def kernel() -> Kernel:
    """The DE421 kernel, opened once (memory-mapped: only the records used are read).

    Returns
    -------
    Kernel
        The opened kernel (cached).

    Raises
    ------
    KernelError
        The file is missing or not the layout this module reads.

    Examples
    --------
    >>> kernel() is kernel()
    True

    References
    ----------
    Folkner, W. M., Williams, J. G. & Boggs, D. H., "The Planetary and Lunar Ephemeris DE 421",
    JPL IPN Progress Report 42-178 (2009).
    """
    return read_kernel(kernel_path())


def read_kernel(path: str) -> Kernel:
    """Read the segment summaries of a type 2 ephemeris kernel (module notes for the layout).

    Parameters
    ----------
    path : str
        The kernel file.

    Returns
    -------
    Kernel
        Its segments, memory-mapped.

    Raises
    ------
    KernelError
        Not a little-endian DAF/SPK file, a segment of another type or frame, or a body of
        :data:`CHAINS` missing.

    Examples
    --------
    >>> read_kernel(kernel_path()).segments[399].center
    3

    References
    ----------
    Folkner, W. M., Williams, J. G. & Boggs, D. H., "The Planetary and Lunar Ephemeris DE 421",
    JPL IPN Progress Report 42-178 (2009); the file layout as described in the module notes.
    """
    try:
        words = np.memmap(path, dtype=WORD, mode="r")
    except (OSError, ValueError) as exc:
        raise KernelError(f"cannot read the ephemeris kernel {path}: {exc}") from None
    raw = words[:RECORD_BYTES // 8].tobytes()
    if raw[:8] != b"DAF/SPK " or raw[88:96] != b"LTL-IEEE":
        raise KernelError(f"{path} is not a little-endian DAF/SPK ephemeris kernel")
    nd, ni = np.frombuffer(raw[8:16], "<i4")
    fward = int(np.frombuffer(raw[76:80], "<i4")[0])
    if (nd, ni) != (2, 6):
        raise KernelError(f"{path}: segment summaries of {nd} doubles and {ni} integers, expected 2 and 6")
    per = nd + (ni + 1) // 2
    segments = {}
    rec = fward
    seen = set()
    while rec and rec not in seen:
        seen.add(rec)
        block = words[(rec - 1) * 128: rec * 128]
        nxt, count = int(block[0]), int(block[2])
        for k in range(count):
            summ = np.asarray(block[3 + k * per: 3 + (k + 1) * per])
            start, end = float(summ[0]), float(summ[1])
            target, center, frame, kind, first, last = (int(v) for v in summ[2:].view("<i4"))
            if target not in CENTER_OF:
                continue
            if kind != 2 or frame != 1 or center != CENTER_OF[target]:
                raise KernelError(f"{path}: segment {target} about {center} is of type {kind} in frame "
                                  f"{frame}; expected type 2 in frame 1 about {CENTER_OF[target]}")
            init, length, rsize, n = (float(v) for v in words[last - 4: last])
            rsize, n = int(rsize), int(n)
            if (rsize - 2) % 3 or n * rsize != last - 4 - (first - 1):
                raise KernelError(f"{path}: segment {target} has an inconsistent record layout")
            records = words[first - 1: first - 1 + n * rsize].reshape(n, rsize)
            segments[target] = Segment(target, center, start, end, init, length, records)
        rec = nxt
    missing = sorted(set(CENTER_OF) - set(segments))
    if missing:
        raise KernelError(f"{path} lacks the segments of bodies {missing}")
    lo = max(s.start_s for s in segments.values())
    hi = min(s.end_s for s in segments.values())
    return Kernel(path, segments, lo, hi)


def seconds_parts(jd1, jd2):
    """TDB Julian date in two parts -> (whole, fraction) seconds past J2000.

    ``whole`` is exact when jd1 is a whole or half day, as :class:`cr3bp.time.scales.Epoch`
    gives it.

    Parameters
    ----------
    jd1, jd2 : float or array_like
        The two parts of the TDB Julian date.

    Returns
    -------
    whole, frac : numpy.ndarray
        Seconds past J2000 (the epoch argument of the tables).

    Raises
    ------
    ValueError
        Inputs that cannot be converted to floats.

    Examples
    --------
    >>> [float(x) for x in seconds_parts(2451545.5, 0.25)]
    [43200.0, 21600.0]

    References
    ----------
    Folkner, W. M., Williams, J. G. & Boggs, D. H., "The Planetary and Lunar Ephemeris DE 421",
    JPL IPN Progress Report 42-178 (2009) (TDB seconds past J2000, the tables' argument).
    """
    return (np.asarray(jd1, float) - J2000_JD) * SECONDS_PER_DAY, np.asarray(jd2, float) * SECONDS_PER_DAY


def evaluate(target: int, whole_s, frac_s, velocity: bool) -> np.ndarray:
    """State of one segment's target about its centre from the Chebyshev tables.

    Parameters
    ----------
    target : int
        The segment's target number (e.g. 301, the Moon about the Earth-Moon barycentre).
    whole_s, frac_s : numpy.ndarray
        TDB seconds past J2000 in two parts (1-D arrays, summed).
    velocity : bool
        Also the velocity (else its columns are 0).

    Returns
    -------
    numpy.ndarray, shape (n, 6)
        km and km/s, ICRF axes.

    Raises
    ------
    KeyError
        A target the kernel does not hold.

    Examples
    --------
    >>> s = evaluate(399, np.array([0.0]), np.array([0.0]), True)
    >>> 4000 < float(np.linalg.norm(s[0, :3])) < 5000        # the Earth about the barycentre
    True

    References
    ----------
    Folkner, W. M., Williams, J. G. & Boggs, D. H., "The Planetary and Lunar Ephemeris DE 421",
    JPL IPN Progress Report 42-178 (2009); Press, W. H. et al., "Numerical Recipes", 3rd ed.
    (2007), sec. 5.8 (Chebyshev recurrences).
    """
    return _evaluate(kernel().segments[target], whole_s, frac_s, velocity)


def _evaluate(seg: Segment, whole_s, frac_s, velocity: bool) -> np.ndarray:
    n = whole_s.size
    out = np.zeros((n, 6))
    for a in range(0, n, CHUNK):
        b = min(n, a + CHUNK)
        _evaluate_block(seg, whole_s[a:b], frac_s[a:b], velocity, out[a:b])
    return out


def _evaluate_block(seg: Segment, whole, frac, velocity, out):
    length = seg.length_s
    n_rec = seg.records.shape[0]
    i1, off1 = np.divmod(whole - seg.init_s, length)       # exact (integers)
    i2, off = np.divmod(off1 + frac, length)
    idx = (i1 + i2).astype(np.int64)
    # the ends of the span (and instants a rounding error beyond them, which the caller's span
    # check lets through): the end record's polynomial, at |s| a hair above 1 at most
    outside = (idx < 0) | (idx >= n_rec)
    if outside.any():
        inside = np.clip(idx, 0, n_rec - 1)
        off = off + (idx - inside) * length
        idx = inside
    s = 2.0 * off / length - 1.0
    m = seg.n_coef
    coef = np.asarray(seg.records[idx, 2:]).reshape(idx.size, 3, m)
    t = np.empty((idx.size, m))
    t[:, 0] = 1.0
    if m > 1:
        t[:, 1] = s
    for k in range(2, m):
        t[:, k] = 2.0 * s * t[:, k - 1] - t[:, k - 2]
    out[:, :3] = np.einsum("nak,nk->na", coef, t)
    if velocity:
        d = np.empty((idx.size, m))
        d[:, 0] = 0.0
        if m > 1:
            d[:, 1] = 1.0
        for k in range(2, m):
            d[:, k] = 2.0 * t[:, k - 1] + 2.0 * s * d[:, k - 1] - d[:, k - 2]
        out[:, 3:] = np.einsum("nak,nk->na", coef, d) * (2.0 / length)


@lru_cache(maxsize=64)
def _combined(terms: tuple) -> Segment:
    """One table for a signed sum of segments on the same record grid (same start, length
    and count): their coefficients added, the shorter series padded with zeros. Summing the
    polynomials before evaluating them is exact algebra and halves the work for, e.g., the
    Moon about the Earth (301 - 399, both on 4-day records)."""
    segs = [(kernel().segments[t], sign) for t, sign in terms]
    m = max(sg.n_coef for sg, _ in segs)
    first = segs[0][0]
    acc = np.zeros((first.records.shape[0], 3, m))
    for sg, sign in segs:
        c = np.asarray(sg.records[:, 2:]).reshape(-1, 3, sg.n_coef)
        acc[:, :, :sg.n_coef] += sign * c
    records = np.empty((acc.shape[0], 2 + 3 * m))
    records[:, :2] = first.records[:, :2]
    records[:, 2:] = acc.reshape(acc.shape[0], -1)
    return Segment(first.target, first.center, first.start_s, first.end_s, first.init_s, first.length_s,
                   records)


def _grid(target: int) -> tuple:
    seg = kernel().segments[target]
    return (seg.init_s, seg.length_s, seg.records.shape[0])


def relative(body: str, center: str, jd1, jd2, velocity: bool) -> np.ndarray:
    """State of ``body`` about ``center`` (names of :data:`CHAINS`) at TDB Julian dates.

    Segments common to both chains cancel and are skipped; the rest are grouped by record grid,
    each group summed into one table.

    Parameters
    ----------
    body, center : str
        Names of :data:`CHAINS`.
    jd1, jd2 : array_like
        TDB Julian date in two parts.
    velocity : bool
        Also the velocity (else its columns are 0).

    Returns
    -------
    numpy.ndarray, shape (n, 6)
        km and km/s, ICRF axes.

    Raises
    ------
    KeyError
        A name not in :data:`CHAINS`.

    Examples
    --------
    >>> s = relative("moon", "earth", [2451545.0], [0.0], False)
    >>> 356000 < float(np.linalg.norm(s[0, :3])) < 407000
    True

    References
    ----------
    Folkner, W. M., Williams, J. G. & Boggs, D. H., "The Planetary and Lunar Ephemeris DE 421",
    JPL IPN Progress Report 42-178 (2009).
    """
    a, b = CHAINS[body], CHAINS[center]
    common = 0
    while common < min(len(a), len(b)) and a[common] == b[common]:
        common += 1
    terms = [(t, 1.0) for t in a[common:]] + [(t, -1.0) for t in b[common:]]
    groups = {}
    for t, sign in terms:
        groups.setdefault(_grid(t), []).append((t, sign))
    whole, frac = seconds_parts(np.ravel(jd1), np.ravel(jd2))
    whole, frac = np.broadcast_arrays(whole, frac)
    out = np.zeros((whole.size, 6))
    for group in groups.values():
        out += _evaluate(_combined(tuple(sorted(group))), whole, frac, velocity)
    return out
