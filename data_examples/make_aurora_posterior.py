"""Recipe of the INVENTED demo posterior: eftsieve's own refit on invented observables.

Everything here is made up for the demo. A fictional lattice study ("Aurora") measures
pi-pi threshold parameters at three pion masses. The "true" constants below are
invented, chosen so that lbar1 + 2 lbar2 sits below the t-derivative positivity bound.
The script writes

- aurora_observables.yaml: the invented measurements (values and covariance);
- aurora_posterior.parquet: posterior samples of lbar1..lbar4 from an emcee fit of those
  observables WITHOUT positivity (an empty region), through eftsieve's refit machinery.

Run from the repository root:  .venv/bin/python data_examples/make_aurora_posterior.py
It is deterministic (fixed seeds).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pandas as pd
import yaml

from eftsieve.api import load_fit
from eftsieve.fit.conventions import Convention
from eftsieve.impose.core import ImposeSettings
from eftsieve.impose.refit import run_refit
from eftsieve.region.model import Region
from eftsieve.theories import get_theory
from eftsieve.theories.chpt_su2.conventions import affine_map
from eftsieve.theories.chpt_su2.observables import (
    load_observables,
    observables_loglike,
    threshold_parameters,
)

HERE = Path(__file__).parent
TRUE_LBAR = np.array([-2.0, 3.75, 2.9, 4.4])          # invented, at M_pi = 139.57 MeV
ENSEMBLES = [(139.57, 92.07), (220.0, 98.0), (300.0, 105.0)]   # invented (M_pi, F_pi) in MeV
NAMES = ["a_I0_l0", "a_I0_l2", "a_I2_l0", "a_I2_l2"]


def observables(rng: np.random.Generator) -> dict:
    names4 = ("lbar1", "lbar2", "lbar3", "lbar4")
    phys = tuple(Convention("lbar", pion_mass_mev=139.57) for _ in names4)
    entries, values, errors = [], [], []
    for m, f in ENSEMBLES:
        here = tuple(Convention("lbar", pion_mass_mev=m) for _ in names4)
        lb = affine_map(names4, phys, here).apply_points(TRUE_LBAR)
        true = threshold_parameters(NAMES, lb[None, :], m, f)[0]
        dpref = 1 / (1440 * math.pi**3 * (f / m) ** 4)   # D-wave unit (GL 1984)
        err = np.array([0.04 * abs(true[0]), 0.04 * abs(true[1]), 0.8 * dpref, 0.5 * dpref])
        for n in NAMES:
            entries.append({"name": n, "pion_mass_mev": m, "fpi_mev": f})
        values += list(true + err * rng.standard_normal(4))
        errors += list(err)
    cov = np.diag(np.square(errors))
    return {"format_version": 1,
            "description": "INVENTED demo data (fictional 'Aurora' study); not real QCD.",
            "observables": entries, "values": [float(v) for v in values],
            "covariance": cov.tolist()}


def main() -> None:
    rng = np.random.default_rng(20261201)
    obs_path = HERE / "aurora_observables.yaml"
    obs_path.write_text("# INVENTED DEMO DATA: made up by make_aurora_posterior.py.\n"
                        + yaml.safe_dump(observables(rng), sort_keys=False))
    fit = load_fit(HERE / "aurora_gaussian.yaml")      # conventions and prior only
    prior = {n: {"uniform": [-15.0, 15.0]} for n in fit.names}
    from eftsieve.fit.model import Prior

    fit = type(fit)(fit.name, fit.theory, fit.parameters, fit.kinematics, fit.mean, fit.cov,
                    None, Prior({n: "uniform" for n in prior},
                                {n: (-15.0, 15.0) for n in prior}), fit.source)
    free = Region("chpt-su2", ("lbar1", "lbar2"), {"name": "lbar", "pion_mass_mev": 139.57}, ())
    cmap = get_theory("chpt-su2").coordinate_map(fit, free)
    loglike = observables_loglike(load_observables(obs_path), fit)
    settings = ImposeSettings(mode="refit", n_samples=8000, walkers=32, seed=7, progress=False)
    res = run_refit(fit, free, cmap, loglike, settings, "invented observables")
    frame = pd.DataFrame(res.samples, columns=list(fit.names))
    frame.to_parquet(HERE / "aurora_posterior.parquet", index=False)
    print(f"wrote {len(frame)} samples; acceptance {res.summary['acceptance']:.2f}, "
          f"tau {res.summary['tau']}, converged {res.summary['converged']}")
    print(frame.describe().loc[["mean", "std"]])


if __name__ == "__main__":
    main()
