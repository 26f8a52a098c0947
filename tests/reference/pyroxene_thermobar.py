#!/usr/bin/env python3
"""Reference temperatures for Consolute's pyroxene thermometers, from the Thermobar library
(Wieser et al. 2022, Volcanica 5:349), a general-purpose thermobarometry package on PyPI.

    pip install Thermobar==1.0.75
    python3 tests/reference/pyroxene_thermobar.py > tests/data/pyroxene_thermobar.json

The compositions are invented test inputs (oxide wt%): pairs spanning Mg# 0.6-0.9. The output
records the Thermobar, pandas and numpy versions used.
"""
import json
import warnings

import numpy as np
import pandas as pd
import Thermobar as pt

warnings.filterwarnings("ignore")

OXIDES = ["SiO2", "TiO2", "Al2O3", "FeOt", "MnO", "MgO", "CaO", "Na2O", "K2O", "Cr2O3"]

# Invented test compositions (cpx, opx), oxide wt%.
PAIRS = [
    ("mg90", [53.2, 0.25, 3.10, 3.10, 0.10, 17.10, 21.90, 0.65, 0.01, 0.80],
             [56.4, 0.08, 2.60, 6.30, 0.14, 33.40, 0.95, 0.05, 0.00, 0.40]),
    ("mg80", [52.4, 0.45, 2.80, 6.40, 0.17, 15.40, 21.30, 0.55, 0.01, 0.25],
             [54.6, 0.15, 1.60, 12.90, 0.25, 29.40, 1.30, 0.03, 0.00, 0.12]),
    ("mg70", [51.7, 0.55, 2.40, 9.70, 0.25, 13.70, 20.70, 0.45, 0.01, 0.05],
             [53.2, 0.20, 1.20, 19.50, 0.38, 24.80, 1.45, 0.03, 0.00, 0.03]),
    ("mg62", [51.0, 0.60, 2.90, 12.20, 0.30, 12.10, 20.30, 0.50, 0.01, 0.02],
             [52.0, 0.22, 1.10, 23.60, 0.45, 21.40, 1.60, 0.03, 0.00, 0.01]),
]
PRESSURES_KBAR = [1.0, 5.0, 10.0]
PAIR_EQUATIONS = ["T_Put2008_eq36", "T_Put2008_eq37", "T_Brey1990", "T_Wells1977"]


def frame(values, suffix):
    return pd.DataFrame([{f"{o}_{suffix}": v for o, v in zip(OXIDES, values)}])


cases = []
for name, cpx, opx in PAIRS:
    cpx_df, opx_df = frame(cpx, "Cpx"), frame(opx, "Opx")
    for p in PRESSURES_KBAR:
        temps = {}
        for eq in PAIR_EQUATIONS:
            kwargs = {} if eq == "T_Wells1977" else {"P": p}
            t_k = pt.calculate_cpx_opx_temp(cpx_comps=cpx_df, opx_comps=opx_df, equationT=eq, **kwargs)
            temps[eq] = float(np.asarray(t_k)[0]) - 273.15
        t_k = pt.calculate_cpx_only_temp(cpx_comps=cpx_df, equationT="T_Put2008_eq32d", P=p)
        temps["T_Put2008_eq32d"] = float(np.asarray(t_k)[0]) - 273.15
        cases.append({
            "name": name,
            "pressure_kbar": p,
            "cpx_wt": dict(zip(OXIDES, cpx)),
            "opx_wt": dict(zip(OXIDES, opx)),
            "temperatures_c": temps,
        })

print(json.dumps({
    "source": "Thermobar (Wieser et al. 2022) calculate_cpx_opx_temp / calculate_cpx_only_temp",
    "thermobar_version": pt.__version__,
    "pandas_version": pd.__version__,
    "numpy_version": np.__version__,
    "cases": cases,
}, indent=1))
