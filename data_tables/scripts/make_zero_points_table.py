"""Regenerate data_tables/photometry/zero_points.ecsv: zero-magnitude flux densities.

Sources
-------
* J, H, Ks: Cohen, Wheaton & Megeath 2003, AJ 126, 1090, Table 2 ("zero
  magnitude" attributes of the J, H, Ks system calibrated there): isophotal
  wavelength, bandwidth, F_lambda and F_nu of a zero-magnitude star.
* V: Bessell, Castelli & Plez 1998, A&A 333, 231, Table A2: effective
  wavelength of the zero-magnitude A0 V reference spectrum, f_lambda and f_nu for
  zero magnitude.

The J, H, Ks numbers were checked against the copy of Cohen et al.'s
table quoted in the metadata of the curve files of the speclite 1.0.0 wheel
(see make_response_curves.py); they agree digit for digit.  The paper itself
was not read.  The V numbers are quoted as remembered ("value from memory")
and should be checked against Bessell et al. 1998 before being relied on.
The internal consistency check F_nu = F_lambda * lambda^2 / c holds to within
2.5 % for every band (1.9 % for H, whose values are quoted at different
isophotal points) (tests/test_photons_sed.py), which guards against a slipped
digit.

Method
------
A spectrum's magnitude in a band is -2.5 log10(<F_lambda> / F_lambda,0),
with <F_lambda> its mean over the band's response curve
(photometry/response_<band>.ecsv, make_response_curves.py; see
snrkit/photons/sed.py).  This is the definition behind both sets of zero
points: Cohen et al. quote F_lambda,0 at the isophotal wavelength, where the
zero-magnitude spectrum equals its band mean, and Bessell et al. quote the
band mean of the zero-magnitude spectrum.  The reference wavelengths below
(isophotal for J, H, Ks; effective for V) are kept for information and for
quick estimates; snrkit's synthetic photometry does not use them.

Run from the repository root:  python data_tables/scripts/make_zero_points_table.py
"""

import datetime
from pathlib import Path

from astropy.table import Table

# band: (reference wavelength [um], bandwidth [um] or nan, F_lambda [W m-2 um-1],
#        F_nu [Jy], kind of reference wavelength, source)
_COHEN = ("Cohen, Wheaton & Megeath 2003, AJ 126, 1090, Table 2 (read as quoted in the curve "
          "files' metadata of speclite 1.0.0)")
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
    t["response_file"] = [f"response_{n}.ecsv" for n in names]
    t.meta["source"] = ("J, H, Ks: Cohen, Wheaton & Megeath 2003, AJ 126, 1090, Table 2 (read "
                        "as quoted in the metadata of the curve files of speclite 1.0.0); "
                        "V: Bessell, Castelli & Plez 1998, A&A 333, 231, Table A2 "
                        "(value from memory; see the script)")
    t.meta["method"] = ("zero-magnitude band-mean flux densities: m = -2.5 log10(<F_lambda> / "
                        "zero_point_flambda), <F_lambda> the spectrum's mean over the curve "
                        "in response_file; reference_wavelength (isophotal for J, H, Ks, "
                        "effective for V) is for information only")
    t.meta["units"] = {"reference_wavelength": "um", "bandwidth": "um",
                       "zero_point_flambda": "W m-2 um-1", "zero_point_fnu": "Jy"}
    t.meta["date"] = datetime.date.today().isoformat()
    t.meta["script"] = "data_tables/scripts/make_zero_points_table.py"
    out = Path(__file__).resolve().parents[1] / "photometry" / "zero_points.ecsv"
    out.parent.mkdir(exist_ok=True)
    t.write(out, format="ascii.ecsv", overwrite=True)


if __name__ == "__main__":
    main()
