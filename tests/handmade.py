"""Hand-built synth.design/1 design entries for tests of the writers (forms, reports).

Closed-loop poles come from numpy.roots of the unreduced characteristic
polynomial, so the documents are consistent without running synth's search.
"""

from __future__ import annotations

import numpy as np


def hand_design(rank, structure, num, den, plant_num, plant_den, feasible=True,
                violations=(), metrics=None) -> dict:
    """One design entry for compensator ``num/den`` around the plant ``plant_num/plant_den``."""
    num, den = np.asarray(num, float), np.asarray(den, float)
    char = np.polyadd(np.polymul(den, plant_den), np.polymul(num, plant_num))
    cl = np.roots(char)
    return {"rank": rank, "structure": structure, "origin": "placement", "feasible": feasible,
            "compensator": {"numerator": num.tolist(), "denominator": den.tolist(),
                            "zeros": [[r.real, r.imag] for r in np.roots(num)] if num.size > 1
                            else [],
                            "poles": [[r.real, r.imag] for r in np.roots(den)] if den.size > 1
                            else [],
                            "gain": float(num[0] / den[0])},
            "closed_loop_poles": [[float(r.real), float(r.imag)] for r in cl],
            "metrics": dict(metrics or {}), "violations": list(violations)}


#: A servo whose load changes: the nominal plant and two variants, as a requirements file's
#: [plant] table, and the same three models as (numerator, denominator) for numpy.
THREE_LOADS = """
[plant]
numerator = [1.0]
denominator = [1.0, 2.0, 0.0]
[[plant.variants]]
label = "heavy"
numerator = [0.5]
denominator = [1.0, 1.0, 0.0]
[[plant.variants]]
label = "light"
numerator = [2.0]
denominator = [1.0, 4.0, 0.0]
"""
THREE_LOADS_POLYS = {"nominal": ([1.0], [1, 2, 0]), "heavy": ([0.5], [1, 1, 0]),
                     "light": ([2.0], [1, 4, 0])}
