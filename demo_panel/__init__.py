"""The bundled demo panel: an invented scenario of regions, its generator and its planted truth."""
