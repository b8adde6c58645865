"""Unit-root, stationarity and cross-sectional dependence tests, single-series and panel.

* ``series``: ADF, Phillips–Perron, KPSS, DF-GLS, Zivot–Andrews (through arch) and the
  Lee–Strazicich minimum LM test with one or two breaks.
* ``panel``: Levin–Lin–Chu, Im–Pesaran–Shin, Fisher-type (Maddala–Wu, Choi), Breitung, Hadri and
  Pesaran's CIPS.
* ``dependence``: Pesaran CD, Breusch–Pagan LM, Pesaran's scaled LM, Baltagi–Feng–Kao
  bias-corrected LM.
* ``battery``: levels and differences, several tests, one decision per series.

Methods, formulas and references: ``docs/methods/roots.md``.
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
