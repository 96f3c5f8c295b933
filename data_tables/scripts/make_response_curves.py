"""Regenerate data_tables/photometry/response_{J,H,Ks,V}.ecsv: band response curves.

Sources
-------
* J, H, Ks: the relative spectral response (RSR) curves of Cohen, Wheaton &
  Megeath 2003, AJ 126, 1090 (their Figs. 1-3 and the tables behind them),
  which define the J, H, Ks system whose zero points are in
  ``zero_points.ecsv``.
* V: the V passband of Bessell 1990, PASP 102, 1181 (Table 2), the standard
  passband also used by Bessell, Castelli & Plez 1998, A&A 333, 231 for the
  V zero point in ``zero_points.ecsv``.

We cannot reach the papers' tables.  The numbers are extracted from the data
files shipped inside the ``speclite`` wheel on PyPI (version pinned below;
Copyright (c) 2015-2025, Speclite Developers, BSD 3-Clause licence, whose
notice travels with the data in ``photometry/response_curves_licence.txt``).
speclite is *not* a runtime dependency of snrkit: this script downloads the
wheel with ``pip download`` (or takes a local wheel) and reads the files out
of the zip archive without installing it.  The files are picked by their
metadata (band name and the publication cited in their description), not by
file name.

Method
------
speclite integrates every curve with photon weights (its integrand is
F_lambda * lambda * R), so it stores responses *per photon*:

* For J, H, Ks it stores the published RSR divided by wavelength.  We
  multiply by wavelength and renormalise to a peak of 1, which restores the
  curves as published.  Check: the bandwidths integral(R dlambda) of the
  restored curves are 0.1627, 0.2509 and 0.2619 um, against 0.162 +- 0.001,
  0.251 +- 0.002 and 0.262 +- 0.002 um in Cohen et al. 2003, Table 2 (as
  quoted in the files' own metadata); the per-photon form gives 0.169, 0.254
  and 0.271 um.  The published RSRs therefore already contain the factor
  lambda of a photon-counting detector: the in-band signal of a
  photon-counting system is proportional to integral(F_lambda R dlambda),
  i.e. R = lambda x (response per photon).  We label them ``weighting:
  energy`` (integrate F_lambda R, no further factor lambda).  Treating them
  instead as per-photon curves (an extra factor lambda) changes a 2900 K
  Planck star's J, H, Ks magnitudes relative to the zero point by 0.008,
  0.004 and 0.002 mag.  The isophotal wavelengths of a 9550 K Planck curve
  (a stand-in for the A0 V reference) do not decide between the two
  readings: 1.2337, 1.6433, 2.1576 um with energy weighting and 1.2373,
  1.6470, 2.1612 um with the extra factor lambda, against 1.235 +- 0.006,
  1.662 +- 0.009 and 2.159 +- 0.011 um in Table 2 (H is pulled redward by
  the reference star's lines, which a Planck curve lacks).  We follow the
  curves' own packaging (divided by lambda for a photon-weighted
  integrator, i.e. lambda already included) and the bandwidth check.
* For V the file holds Bessell 1990, Table 2 normalised to a peak of 1,
  copied as is.  Bessell's 1990 passbands are energy response functions,
  meant for integral(F_lambda R dlambda); Bessell & Murphy 2012, PASP 124,
  140 give photon-counting ("photonic") versions, R / lambda renormalised,
  which give the same synthetic magnitudes with photon weights (value from
  memory: we could read only the catalogue description of Bessell & Murphy
  2012, which calls their curves "photonic responses").  The V zero point
  of Bessell, Castelli & Plez 1998 (f_lambda = 3.631e-9 erg s-1 cm-2 A-1,
  i.e. -2.5 log10 f_lambda = 21.100) is a mean f_lambda weighted by the
  same energy response (value from memory).  We label V ``weighting:
  energy``.  Photon weights with the energy curve would make a 2900 K
  Planck star's V - J bluer by 0.02 mag.

Wavelengths are converted from Angstrom to um; nothing else is changed.

Run from the repository root:
    python data_tables/scripts/make_response_curves.py [--wheel PATH]
It needs network access to PyPI only without ``--wheel``.
"""

import argparse
import datetime
import subprocess
import sys
import tempfile
import zipfile
from pathlib import Path

import numpy as np
from astropy.table import Table

PACKAGE = "speclite"
VERSION = "1.0.0"
OUT = Path(__file__).resolve().parents[1] / "photometry"
LICENCE_FILE = "response_curves_licence.txt"

_COHEN = "Cohen, Wheaton & Megeath 2003, AJ 126, 1090 (relative spectral response curves, Figs. 1-3)"
_BESSELL = "Bessell 1990, PASP 102, 1181 (Table 2, V passband)"
# band -> (text that the curve's description must contain, multiply by wavelength?, source)
BANDS = {
    "J": ("Cohen, Wheaton & Megeath (2003)", True, _COHEN),
    "H": ("Cohen, Wheaton & Megeath (2003)", True, _COHEN),
    "Ks": ("Cohen, Wheaton & Megeath (2003)", True, _COHEN),
    "V": ("UBVRI passbands", False, _BESSELL),
}
#: Cohen et al. 2003, Table 2 bandwidths [um] and their quoted uncertainties.
COHEN_BANDWIDTH_UM = {"J": (0.162, 0.001), "H": (0.251, 0.002), "Ks": (0.262, 0.002)}


def _wheel(path):
    if path:
        return Path(path)
    tmp = Path(tempfile.mkdtemp())
    subprocess.run([sys.executable, "-m", "pip", "download", "--no-deps", "--only-binary",
                    ":all:", "-d", str(tmp), f"{PACKAGE}=={VERSION}"], check=True)
    (whl,) = tmp.glob(f"{PACKAGE}-{VERSION}-*.whl")
    return whl


def _curves(whl):
    """The band's curve file in the wheel, chosen by metadata (band name and cited paper)."""
    found = {}
    with zipfile.ZipFile(whl) as z:
        licence = next(z.read(n).decode() for n in z.namelist()
                       if n.endswith(".dist-info/licenses/LICENSE.rst")
                       or n.endswith(".dist-info/LICENSE.rst"))
        for name in z.namelist():
            if "/data/filters/" not in name or not name.endswith(".ecsv"):
                continue
            t = Table.read(z.read(name).decode(), format="ascii.ecsv")
            band = t.meta.get("band_name")
            desc = str(t.meta.get("description", ""))
            if band in BANDS and BANDS[band][0] in desc:
                if band in found:
                    raise RuntimeError(f"two curves match band {band}")
                found[band] = t
    missing = set(BANDS) - set(found)
    if missing:
        raise RuntimeError(f"no curve found for {sorted(missing)}")
    return found, licence


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--wheel", help=f"a local {PACKAGE}-{VERSION} wheel (default: pip download)")
    args = ap.parse_args(argv)
    whl = _wheel(args.wheel)
    curves, licence = _curves(whl)
    today = datetime.date.today().isoformat()
    OUT.mkdir(exist_ok=True)
    (OUT / LICENCE_FILE).write_text(
        f"The band response curves response_J/H/Ks/V.ecsv in this folder were extracted\n"
        f"from the data files of the {PACKAGE} {VERSION} wheel (PyPI) by\n"
        f"data_tables/scripts/make_response_curves.py.  The curves themselves are the\n"
        f"published ones of Cohen, Wheaton & Megeath 2003 (AJ 126, 1090) and Bessell 1990\n"
        f"(PASP 102, 1181).  {PACKAGE}'s licence notice follows.\n\n" + licence)
    for band, (_, times_lambda, source) in BANDS.items():
        t = curves[band]
        lam = np.asarray(t["wavelength"].quantity.to_value("um"), dtype=float)
        r = np.asarray(t["response"], dtype=float)
        if times_lambda:
            r = r * lam
        r = r / r.max()
        bw = float(np.trapezoid(r, lam))
        if band in COHEN_BANDWIDTH_UM:
            ref, err = COHEN_BANDWIDTH_UM[band]
            print(f"{band}: bandwidth {bw:.4f} um (Cohen et al. 2003: {ref} +- {err})")
            assert abs(bw - ref) <= err, band
        out = Table()
        out["wavelength"] = np.round(lam, 6)
        out["wavelength"].unit = "um"
        out["relative_response"] = np.round(r, 6)
        out.meta["band"] = band
        out.meta["weighting"] = "energy"
        out.meta["weighting_meaning"] = (
            "mean flux density <F_lambda> = integral(F_lambda R dlambda) / integral(R dlambda); "
            "for a photon-counting detector R already contains the factor lambda "
            "(R = lambda x response per photon)")
        out.meta["source"] = source
        out.meta["extracted_from"] = (f"data files of the {PACKAGE} {VERSION} wheel on PyPI "
                                      f"(BSD 3-Clause, see {LICENCE_FILE})")
        out.meta["method"] = (
            "published RSR restored from the per-photon curve stored by the package "
            "(multiplied by wavelength, peak normalised to 1); bandwidths integral(R dlambda) "
            "match Cohen et al. 2003 Table 2 within its quoted uncertainty"
            if times_lambda else
            "copied as stored (Bessell 1990 Table 2, peak normalised to 1); an energy response "
            "per Bessell & Murphy 2012, PASP 124, 140 (value from memory), the weighting of the "
            "V zero point of Bessell, Castelli & Plez 1998")
        out.meta["units"] = {"wavelength": "um", "relative_response": "dimensionless, peak 1"}
        out.meta["licence"] = f"see {LICENCE_FILE} in this folder"
        out.meta["date"] = today
        out.meta["script"] = "data_tables/scripts/make_response_curves.py"
        out.write(OUT / f"response_{band}.ecsv", format="ascii.ecsv", overwrite=True)


if __name__ == "__main__":
    main()
