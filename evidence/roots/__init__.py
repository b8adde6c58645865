"""Unit-root, stationarity and cross-sectional dependence tests, single-series and panel."""
