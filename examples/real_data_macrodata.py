"""Real data shipped by statsmodels: a unit-root test on US real GDP, 1959Q1–2009Q3.

``statsmodels.datasets.macrodata`` (no network needed). The package's ``adf_test`` (through
``arch.unitroot.ADF``) on log real GDP with a constant and trend and four augmentation lags is
checked against ``statsmodels.tsa.stattools.adfuller`` (an independent implementation): the same
statistic and the same MacKinnon p-value. The KPSS test (through ``arch``) is checked against
``statsmodels.tsa.stattools.kpss`` with the same bandwidth.

Usage: ``python examples/real_data_macrodata.py``; exits with an error if a check fails.
"""

from __future__ import annotations

import warnings

import numpy as np
import statsmodels.api as sm
from statsmodels.tsa.stattools import adfuller, kpss

import evidence as ev


def main() -> None:
    data = sm.datasets.macrodata.load_pandas().data
    log_gdp = np.log(data["realgdp"].to_numpy())

    # MacKinnon p-values, as statsmodels (the default simulates the p-value for T)
    ours = ev.adf_test(log_gdp, trend="trend", lags=4, inference="asymptotic")
    with warnings.catch_warnings():  # newer statsmodels announce a change of adfuller's return type
        warnings.simplefilter("ignore", FutureWarning)
        stat, pvalue, *_ = adfuller(log_gdp, maxlag=4, autolag=None, regression="ct")
    np.testing.assert_allclose(ours.statistic, stat, rtol=1e-8)
    np.testing.assert_allclose(ours.pvalue, pvalue, atol=1e-4)
    print(ours.summary())
    print(f"statsmodels adfuller: statistic {stat:.6f}, p-value {pvalue:.4f}")

    hac_lags = 8
    ours_kpss = ev.kpss_test(log_gdp, trend="trend", hac_lags=hac_lags)
    with warnings.catch_warnings():  # statsmodels warns that the p-value is outside its table
        warnings.simplefilter("ignore")
        kstat, *_ = kpss(log_gdp, regression="ct", nlags=hac_lags)
    np.testing.assert_allclose(ours_kpss.statistic, kstat, rtol=1e-8)
    print(ours_kpss.summary())
    print(f"statsmodels kpss: statistic {kstat:.6f}")
    print("all checks passed")


if __name__ == "__main__":
    main()
