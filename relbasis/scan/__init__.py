"""Convergence scans: many bases, in parallel, resumable, locally or on a Dask cluster.

A plan (TOML) gives a base config, axes whose product is the scan, the states to track, the
reference and a target accuracy:

```toml
[base.ion]            # any [ion] key of the config file
Z = 74
nucleus = "point"
[base.basis]          # any [basis] key
balance = "dkb"
[axes]                # dotted key = list of values (or {from, to, step}); the scan is their product
"basis.size" = [40, 60, 80, 100, 120]
"basis.order" = [7, 9]
[track]
states = ["1s1/2", "2p3/2"]   # or max_n = 4: every bound state with n <= 4
target = 1e-9
reference = "auto"            # "exact" (point nucleus), "largest" (largest basis of the scan), "auto"
```

``[base.electrons]`` (a core, docs/dhf.md) goes into every unit: each runs the mean field, and
the store and the analysis carry the core's total energy (docs/scan.md, "Scans of a core").
``[track] second_order = L`` adds the second-order Coulomb energy summed over each unit's basis
through l_max = L (relbasis.perturbation), its convergence table and its recommendation against
``second_order_target`` (hartree; docs/scan.md, "Scans of a second-order energy").

Each *unit* is one basis for one ion with the symmetries the tracked states need.  Finished
units are appended to ``results.jsonl`` in the output folder, one JSON line each, keyed by a
hash of the unit's full configuration and the relbasis version; a rerun (or a changed plan)
computes only the units whose key is not there yet.  Work runs in joblib's process pool
(``jobs``) or, with ``scheduler``, on a dask.distributed cluster through joblib's Dask backend.

The package has one module per job: :mod:`~relbasis.scan.plan` (the plan, its validation and its
units), :mod:`~relbasis.scan.store` (the results store), :mod:`~relbasis.scan.run` (running the
units and the whole scan), :mod:`~relbasis.scan.analysis` (tables, rates, recommendation) and
:mod:`~relbasis.scan.output` (the output folder: its own files, summary.json, convergence.csv,
pictures, the printed table).  The names below are the public ones; ``relbasis.scan.scan`` is
the entry point.
"""

from .analysis import analyse, fit_rate
from .output import FIXED_OUTPUTS, OUTPUT_KIND, claim_folder, summary_table, write_outputs
from .plan import MAX_UNITS, REFERENCES, Plan, Unit, check_units, load_plan, parse_label, plan_from_dict, unit_key, units
from .run import SCHEDULER_ADDRESS, ScanResult, check_scheduler, run_unit, scan
from .store import RECORD_FORMAT, Store

__all__ = ["scan", "ScanResult", "Plan", "Unit", "plan_from_dict", "load_plan", "check_units", "parse_label",
           "units", "unit_key", "MAX_UNITS", "REFERENCES", "Store", "RECORD_FORMAT", "run_unit", "check_scheduler",
           "SCHEDULER_ADDRESS", "analyse", "fit_rate", "write_outputs", "summary_table", "claim_folder",
           "OUTPUT_KIND", "FIXED_OUTPUTS"]
