"""Unit-root, stationarity and cross-sectional dependence tests, single-series and panel.

* ``series``: ADF, Phillips–Perron, KPSS, DF-GLS, Zivot–Andrews (through arch) and the
  Lee–Strazicich minimum LM test with one or two breaks.
* ``panel``: Im–Pesaran–Shin, Fisher-type (Maddala–Wu, Choi) and, re-exported, Levin–Lin–Chu,
  Breitung and Hadri (``pooled``) and Pesaran's CIPS (``_cips``).
* ``dependence``: Pesaran CD, Breusch–Pagan LM, Pesaran's scaled LM, Baltagi–Feng–Kao
  bias-corrected LM.
* ``battery``: levels and differences, several tests, one decision per series.

P-values are simulated for the data's own T (and N) by default (``inference="simulated"``;
``_calibrate``, ``_panel_null``); measured sizes in ``docs/methods/size.md``. Methods, formulas,
conventions and references: ``docs/methods/roots.md``.
"""

from evidence.roots.battery import RootBatteryResult, root_battery
from evidence.roots.dependence import (
    bias_corrected_lm_test,
    lm_test,
    pesaran_cd_test,
    scaled_lm_test,
)
from evidence.roots.panel import (
    breitung_test,
    cips_test,
    fisher_test,
    hadri_test,
    ips_test,
    llc_test,
)
from evidence.roots.series import (
    adf_test,
    dfgls_test,
    kpss_test,
    lee_strazicich_test,
    pp_test,
    za_test,
)

__all__ = ["adf_test", "pp_test", "kpss_test", "dfgls_test", "za_test", "lee_strazicich_test",
    "llc_test", "ips_test", "fisher_test", "breitung_test", "hadri_test", "cips_test",
    "pesaran_cd_test", "lm_test", "scaled_lm_test", "bias_corrected_lm_test",
    "root_battery", "RootBatteryResult"]
