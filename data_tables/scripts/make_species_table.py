"""Regenerate data_tables/species.ecsv: molar masses of the supported gases.

Method: the molar mass of each species is the sum of the standard atomic
weights of its atoms.  Atomic weights are the IUPAC conventional values
(Prohaska et al. 2022, Pure Appl. Chem. 94, 573, "Standard atomic weights of
the elements 2021", Table 2 abridged values), used in g/mol.

Run from the repository root:  python data_tables/scripts/make_species_table.py
"""

import datetime
import re
from pathlib import Path

from astropy.table import Table

# IUPAC 2021 abridged/conventional standard atomic weights [g/mol]
ATOMIC_WEIGHT = {
    "H": 1.008, "He": 4.0026, "C": 12.011, "N": 14.007, "O": 15.999,
    "Na": 22.990, "S": 32.06, "Cl": 35.45, "Ar": 39.95, "K": 39.098,
}

# species: (description, notes)
SPECIES = {
    "H2": "molecular hydrogen", "He": "helium", "N2": "molecular nitrogen",
    "O2": "molecular oxygen", "Ar": "argon", "H2O": "water", "CO2": "carbon dioxide",
    "CO": "carbon monoxide", "CH4": "methane", "NH3": "ammonia", "O3": "ozone",
    "N2O": "nitrous oxide", "SO2": "sulfur dioxide", "H2S": "hydrogen sulfide",
    "HCN": "hydrogen cyanide", "Na": "sodium (atomic)", "K": "potassium (atomic)",
    "C2H2": "acetylene", "PH3": "phosphine", "OCS": "carbonyl sulfide", "HCl": "hydrogen chloride",
}
ATOMIC_WEIGHT["P"] = 30.974


def molar_mass(formula):
    """Sum of atomic weights for a formula such as 'CO2' or 'C2H2'."""
    total = 0.0
    for elem, count in re.findall(r"([A-Z][a-z]?)(\d*)", formula):
        total += ATOMIC_WEIGHT[elem] * (int(count) if count else 1)
    return total


def main():
    names = list(SPECIES)
    t = Table()
    t["species"] = names
    t["molar_mass"] = [round(molar_mass(n), 4) for n in names]
    t["molar_mass"].unit = "g / mol"
    t["description"] = [SPECIES[n] for n in names]
    t.meta["source"] = ("IUPAC standard atomic weights 2021 (Prohaska et al. 2022, "
                        "Pure Appl. Chem. 94, 573), abridged values")
    t.meta["method"] = "molar mass = sum of the atomic weights of the formula's atoms"
    t.meta["units"] = {"molar_mass": "g/mol"}
    t.meta["date"] = datetime.date.today().isoformat()
    t.meta["script"] = "data_tables/scripts/make_species_table.py"
    out = Path(__file__).resolve().parents[1] / "species.ecsv"
    t.write(out, format="ascii.ecsv", overwrite=True)


if __name__ == "__main__":
    main()
