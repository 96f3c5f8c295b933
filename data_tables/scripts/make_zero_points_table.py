"""Regenerate data_tables/photometry/zero_points.ecsv: zero-magnitude flux densities.

Sources
-------
* J, H, Ks: Cohen, Wheaton & Megeath 2003, AJ 126, 1090, Table 2 ("zero
  magnitude" attributes of the J, H, Ks system calibrated there): isophotal
  wavelength, bandwidth, F_lambda and F_nu of a zero-magnitude star.
* V: Bessell, Castelli & Plez 1998, A&A 333, 231, Table A2: effective
  wavelength of the zero-magnitude A0 V reference spectrum, f_lambda and f_nu for
  zero magnitude.

All numbers below are marked "value from memory": the snrkit authors could
not read the tables of these papers while writing this script, so they are
quoted as remembered (the four-figure values are widely reproduced).  They
should be checked against the papers before being relied on.  The internal
consistency check F_nu = F_lambda * lambda^2 / c holds to within 2.5 % for
every band (1.9 % for H, whose values are quoted at different isophotal points) (tests/test_photons_sed.py), which guards against a slipped
digit but not against a remembered value being wrong in a consistent way.

Method
------
snrkit has no passband curves for these bands (none could be sourced), so
synthetic photometry uses the isophotal approximation: a spectrum's
magnitude in a band is -2.5 log10(F_lambda(lambda_ref) / F_lambda,0), with
lambda_ref the isophotal (J, H, Ks) or effective (V) wavelength below.  For a
smooth spectrum this differs from a passband integral by a colour term of
order (width/lambda)^2 times the curvature of log F; for stars far from
the reference colours (very cool or very hot) expect errors of a few
hundredths of a magnitude (common practice, no source).

Run from the repository root:  python data_tables/scripts/make_zero_points_table.py
"""

import datetime
from pathlib import Path

from astropy.table import Table

# band: (reference wavelength [um], bandwidth [um] or nan, F_lambda [W m-2 um-1],
#        F_nu [Jy], kind of reference wavelength, source)
_COHEN = "Cohen, Wheaton & Megeath 2003, AJ 126, 1090, Table 2 (value from memory)"
_BESSELL = "Bessell, Castelli & Plez 1998, A&A 333, 231, Table A2 (value from memory)"
BANDS = {
    # Cohen et al. quote F_lambda in W cm-2 um-1: 3.129e-13, 1.133e-13, 4.283e-14
    "J": (1.235, 0.162, 3.129e-9, 1594.0, "isophotal", _COHEN),
    "H": (1.662, 0.251, 1.133e-9, 1024.0, "isophotal", _COHEN),
    "Ks": (2.159, 0.262, 4.283e-10, 666.7, "isophotal", _COHEN),
    # Bessell et al. quote f_lambda = 363.1e-11 erg cm-2 s-1 A-1 and
    # f_nu = 3.636e-20 erg cm-2 s-1 Hz-1; 1 erg cm-2 s-1 A-1 = 10 W m-2 um-1
    "V": (0.545, float("nan"), 3.631e-8, 3636.0, "effective", _BESSELL),
}


def main():
    names = list(BANDS)
    t = Table()
    t["band"] = names
    t["reference_wavelength"] = [BANDS[n][0] for n in names]
    t["reference_wavelength"].unit = "um"
    t["bandwidth"] = [BANDS[n][1] for n in names]
    t["bandwidth"].unit = "um"
    t["zero_point_flambda"] = [BANDS[n][2] for n in names]
    t["zero_point_flambda"].unit = "W / (m2 um)"
    t["zero_point_fnu"] = [BANDS[n][3] for n in names]
    t["zero_point_fnu"].unit = "Jy"
    t["wavelength_kind"] = [BANDS[n][4] for n in names]
    t["source"] = [BANDS[n][5] for n in names]
    t.meta["source"] = ("J, H, Ks: Cohen, Wheaton & Megeath 2003, AJ 126, 1090, Table 2; "
                        "V: Bessell, Castelli & Plez 1998, A&A 333, 231, Table A2 "
                        "(all values from memory; see the script)")
    t.meta["method"] = ("zero-magnitude flux densities at the isophotal (J, H, Ks) or "
                        "effective (V) wavelength; snrkit's synthetic photometry evaluates "
                        "the spectrum at that wavelength (isophotal approximation, no "
                        "passband curves shipped)")
    t.meta["units"] = {"reference_wavelength": "um", "bandwidth": "um",
                       "zero_point_flambda": "W m-2 um-1", "zero_point_fnu": "Jy"}
    t.meta["date"] = datetime.date.today().isoformat()
    t.meta["script"] = "data_tables/scripts/make_zero_points_table.py"
    out = Path(__file__).resolve().parents[1] / "photometry" / "zero_points.ecsv"
    out.parent.mkdir(exist_ok=True)
    t.write(out, format="ascii.ecsv", overwrite=True)


if __name__ == "__main__":
    main()
