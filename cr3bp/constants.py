"""Every physical constant of the library, once, each with its source on the line.

Modules import them from here (``from ..constants import AU_KM``); a value that belongs to one
method only (a tolerance, a series' coefficients) stays beside that method. The GMs of the
bodies the systems use are data with their sources in ``data/systems.toml``
(:func:`cr3bp.systems.body`); the integrator's right-hand-side mode numbers are in
:mod:`cr3bp.integrate.modes`. ``tests/test_constants_once.py`` fails on a copy of any of these
values elsewhere in ``cr3bp/``.
"""

# ---- lengths ------------------------------------------------------------------------------
#: Astronomical unit, km (exact by definition: IAU 2012 Resolution B2).
AU_KM = 149597870.7

# ---- time ---------------------------------------------------------------------------------
#: Seconds in a day of 86 400 SI seconds (the day of TT and TDB; the Julian day).
SECONDS_PER_DAY = 86400.0
#: Days in a Julian century (definition of the Julian year, 365.25 days).
DAYS_PER_JULIAN_CENTURY = 36525.0
#: Days in a Julian millennium (definition of the Julian year, 365.25 days).
DAYS_PER_JULIAN_MILLENNIUM = 365250.0
#: Julian Date of MJD 0.0 (definition of the Modified Julian Date).
MJD_ZERO_JD = 2400000.5
#: Julian Date (TT) of the epoch J2000.0 (IAU 1976/2000, common practice).
J2000_JD = 2451545.0
#: TT - TAI, s (exact: IAU 1991 Resolution A4; IERS Conventions 2010, eq. 10.1).
TT_MINUS_TAI_S = 32.184
#: The Moon's sidereal month, days (Astronomical Almanac, from memory; the synodic month it
#: gives with the sidereal year is checked in tests/test_against_published_orbits.py).
SIDEREAL_MONTH_DAYS = 27.321662
#: The Earth's sidereal year, days (Astronomical Almanac, from memory; checked as above).
SIDEREAL_YEAR_DAYS = 365.256363

# ---- orientation --------------------------------------------------------------------------
#: Obliquity of the ecliptic at J2000, arcsec (IAU 2006: Hilton et al. 2006, Celest. Mech. Dyn.
#: Astr. 94, 351; from memory, pyerfa's obl06 gives the same value, see
#: tests/test_against_pyerfa_frames.py).
OBLIQUITY_J2000_ARCSEC = 84381.406

# ---- forces -------------------------------------------------------------------------------
#: Solar radiation pressure on a perfect absorber at 1 au, N/m^2 (common practice).
SOLAR_PRESSURE_1AU = 4.56e-6
#: GM, km^3/s^2, of the bodies data/systems.toml does not list: DE430 values (Folkner et al.,
#: IPN Progress Report 42-196, 2014, table 8; from memory). The other GMs are in
#: data/systems.toml with their sources (:func:`cr3bp.systems.body`).
GM_KM3_S2_DE430 = {
    "mercury": 22031.78, "venus": 324858.592, "uranus": 5793939.3, "neptune": 6836529.0,
}
