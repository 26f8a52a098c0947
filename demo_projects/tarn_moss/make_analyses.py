#!/usr/bin/env python3
"""Write the invented spot analyses of the Tarn Moss demo scenario.

Every number here is invented for the demo: an imaginary syenite and gabbro, with phase
formulae chosen to look like exsolved alkali feldspar and pyroxene, converted to oxide wt% with
the CIAAW 2021 atomic weights and jittered by a seeded random number generator. Run it again to
regenerate the CSV files byte for byte.
"""
import csv
import random

W = {"Na": 22.98976928, "K": 39.0983, "Ca": 40.078, "Sr": 87.62, "Al": 26.9815384,
     "Ti": 47.867, "Cr": 51.9961, "Mn": 54.938043, "Fe": 55.845, "O": 15.999, "Mg": 24.305,
     "Si": 28.085, "Ba": 137.327}
# oxide: (cation, cations per oxide, oxygens per oxide)
OX = {"SiO2": ("Si", 1, 2), "TiO2": ("Ti", 1, 2), "Al2O3": ("Al", 2, 3), "Cr2O3": ("Cr", 2, 3),
      "Fe2O3": ("Fe3", 2, 3), "FeO": ("Fe2", 1, 1), "MnO": ("Mn", 1, 1), "MgO": ("Mg", 1, 1),
      "CaO": ("Ca", 1, 1), "SrO": ("Sr", 1, 1), "BaO": ("Ba", 1, 1), "Na2O": ("Na", 2, 1),
      "K2O": ("K", 2, 1)}


def oxide_mass(name):
    cation, n, o = OX[name]
    return n * W[cation.rstrip("23")] + o * W["O"]


def to_wt(cations, total, rng, rel_noise=0.004):
    mass = {}
    for name, (cation, n, _) in OX.items():
        amount = cations.get(cation, 0.0)
        if amount > 0:
            mass[name] = amount / n * oxide_mass(name)
    s = sum(mass.values())
    out = {}
    for name, m in mass.items():
        value = m / s * total
        value *= 1 + rng.gauss(0, rel_noise if value > 2 else 4 * rel_noise)
        out[name] = value
    return out


def fmt(x):
    return f"{x:.2f}"


def feldspar_host(rng):
    k = rng.uniform(0.86, 0.92)
    ca = rng.uniform(0.003, 0.012)
    ba = rng.uniform(0.004, 0.012)
    na = 1.0 - k - ca - ba
    fe3 = rng.uniform(0.003, 0.008)
    al = 1.0 + ca + ba - fe3
    return {"K": k, "Na": na, "Ca": ca, "Ba": ba, "Fe3": fe3, "Al": al, "Si": 4.0 - al - fe3}


def feldspar_lamella(rng):
    k = rng.uniform(0.015, 0.04)
    ca = rng.uniform(0.015, 0.035)
    na = 1.0 - k - ca
    fe3 = rng.uniform(0.001, 0.004)
    al = 1.0 + ca - fe3
    return {"K": k, "Na": na, "Ca": ca, "Fe3": fe3, "Al": al, "Si": 4.0 - al - fe3}


def write_feldspar(rng, path):
    header = ["Sample", "Grain", "Phase", "Spot", "SiO2", "TiO2", "Al2O3", "FeO", "MgO", "CaO",
              "SrO", "BaO", "Na2O", "K2O", "Total"]
    rows = []
    grains = [("TM-01", "g1", 5, 4), ("TM-01", "g2", 4, 4), ("TM-04", "g1", 5, 3)]
    for sample, grain, n_host, n_lam in grains:
        for phase, count, make in (("host", n_host, feldspar_host),
                                   ("lamella", n_lam, feldspar_lamella)):
            for i in range(1, count + 1):
                cations = make(rng)
                total = rng.uniform(99.2, 100.6)
                wt = to_wt(cations, total, rng)
                # FeO reported as total iron, as microprobes do.
                wt["FeO"] = wt.pop("Fe2O3") * 2 * oxide_mass("FeO") / oxide_mass("Fe2O3")
                rows.append((sample, grain, phase, f"{grain}-{phase[0]}{i}", wt))
    # Poor analyses the quality flags should catch (invented, with the cause noted in the spot).
    rows.append(("TM-01", "g1", "host", "g1-h6-lowtotal",
                 to_wt(feldspar_host(rng), 96.9, rng)))
    rows.append(("TM-01", "g2", "lamella", "g2-l5-hightotal",
                 to_wt(feldspar_lamella(rng), 102.4, rng)))
    mixed = feldspar_host(rng)
    mixed["Si"] += 0.35  # beam partly on a silica-rich crack filling
    rows.append(("TM-04", "g1", "host", "g1-h6-crack", to_wt(mixed, 100.1, rng)))
    with open(path, "w", newline="") as f:
        w = csv.writer(f)
        w.writerow(header)
        for sample, grain, phase, spot, wt in rows:
            wt.setdefault("FeO", wt.pop("Fe2O3", 0.0) * 2 * oxide_mass("FeO") / oxide_mass("Fe2O3"))
            cells = []
            for name in header[4:-1]:
                value = wt.get(name, 0.0)
                if name == "TiO2":
                    cells.append("n.d.")
                elif name == "SrO":
                    cells.append("<0.03")
                elif name == "MgO":
                    cells.append("bdl")
                else:
                    cells.append(fmt(value))
            total = sum(float(c) for c in cells if c[0].isdigit())
            w.writerow([sample, grain, phase, spot, *cells, fmt(total)])


def augite(rng):
    ca = rng.uniform(0.80, 0.86)
    na = rng.uniform(0.02, 0.04)
    ti = rng.uniform(0.01, 0.02)
    fe3 = rng.uniform(0.03, 0.05)
    al_iv = rng.uniform(0.07, 0.10)
    # Charge balance against a divalent M site: Al(IV) and Na are made up by Ti, Fe3+ and Al(VI).
    al_vi = al_iv + na - 2 * ti - fe3
    mn = 0.01
    mg_fe = 2.0 - ca - na - ti - fe3 - al_vi - mn
    mg = mg_fe * rng.uniform(0.66, 0.70)
    return {"Si": 2.0 - al_iv, "Al": al_iv + al_vi, "Ti": ti, "Fe3": fe3, "Fe2": mg_fe - mg,
            "Mg": mg, "Mn": mn, "Ca": ca, "Na": na}


def orthopyroxene(rng):
    ca = rng.uniform(0.03, 0.05)
    al_iv = rng.uniform(0.02, 0.04)
    mn = 0.02
    mg_fe = 2.0 - ca - mn - al_iv
    mg = mg_fe * rng.uniform(0.60, 0.63)
    return {"Si": 2.0 - al_iv, "Al": 2 * al_iv, "Fe2": mg_fe - mg, "Mg": mg, "Mn": mn,
            "Ca": ca}


def write_pyroxene(rng, path):
    header = ["sample", "grain", "phase", "spot", "SiO2", "TiO2", "Al2O3", "Cr2O3", "FeOt", "MnO",
              "MgO", "CaO", "Na2O", "K2O"]
    rows = []
    for grain, n_host, n_lam in (("p1", 4, 3), ("p2", 3, 3)):
        for phase, count, make in (("augite", n_host, augite), ("opx-lamella", n_lam, orthopyroxene)):
            for i in range(1, count + 1):
                wt = to_wt(make(rng), rng.uniform(99.3, 100.5), rng)
                fe = wt.pop("FeO", 0.0) + wt.pop("Fe2O3", 0.0) * 2 * oxide_mass("FeO") / oxide_mass("Fe2O3")
                wt["FeOt"] = fe
                rows.append(("TM-09", grain, phase, f"{grain}-{phase[0]}{i}", wt))
    with open(path, "w", newline="") as f:
        w = csv.writer(f, delimiter=";")
        w.writerow(header)
        for sample, grain, phase, spot, wt in rows:
            cells = []
            for name in header[4:]:
                value = wt.get(name)
                cells.append("bdl" if value is None else fmt(value).replace(".", ","))
            w.writerow([sample, grain, phase, spot, *cells])


if __name__ == "__main__":
    rng = random.Random(20261201)
    write_feldspar(rng, "analyses.csv")
    write_pyroxene(rng, "pyroxene_analyses.csv")
