"""Studies a planner runs around a plan, each one function with a frozen result.

- :func:`~netdim.studies.failures.failure_study`: each link (or site) failed in turn,
  traffic rerouted, evaluated (:class:`FailureStudy`);
- :func:`~netdim.studies.growth.growth_study`: the plan year by year as traffic grows,
  capacity never falling (:class:`GrowthStudy`);
- :func:`~netdim.studies.compare.compare_designs`: designs for the same demands sized side
  by side (:class:`TopologyComparison`), with standard variants from
  :func:`~netdim.studies.variants.build_variant`;
- :func:`~netdim.studies.headroom.headroom_study`: the largest traffic multiplier the
  installed capacities carry (:class:`HeadroomStudy`);
- :func:`~netdim.studies.survive.survivable_plan`: capacities for every single-link
  failure (:class:`SurvivablePlan`).

They call only the public evaluation and sizing; the independent evaluations inside a study
run serially or on a local process pool (``workers=N``) with the same result. Names load on
first use (PEP 562), so a command pays only for its own study.
"""

from __future__ import annotations

import importlib

_EXPORTS = {
    **dict.fromkeys(("failure_study", "FailureStudy", "FailureRow", "fail_elements"),
                    "netdim.studies.failures"),
    **dict.fromkeys(("growth_study", "GrowthStudy", "GrowthYear", "file_rates"),
                    "netdim.studies.growth"),
    **dict.fromkeys(("compare_designs", "TopologyComparison", "DesignRow"),
                    "netdim.studies.compare"),
    **dict.fromkeys(("Variant", "parse_variants", "build_variant"), "netdim.studies.variants"),
    **dict.fromkeys(("headroom_study", "HeadroomStudy", "Headroom"), "netdim.studies.headroom"),
    **dict.fromkeys(("survivable_plan", "SurvivablePlan"), "netdim.studies.survive"),
}

__all__ = list(_EXPORTS)


def __getattr__(name):
    if name in _EXPORTS:
        value = getattr(importlib.import_module(_EXPORTS[name]), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'netdim.studies' has no attribute {name!r}")


def __dir__():
    return sorted(set(globals()) | set(__all__))
