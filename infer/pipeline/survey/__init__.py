"""Many regions at once: one fit per catalog or per group, in parallel on a Dask cluster.

:func:`run_survey` (:mod:`.run`) reads every catalog, fits each region with
:func:`infer.pipeline.fit.fit_region` as one Dask task, and writes, in the output
folder ``DIR``:

* ``DIR/<folder>/`` -- the complete output of ``infer fit`` for each region;
  ``<folder>`` is the region name made safe for file systems (see
  :func:`folder_names`);
* ``survey.ecsv`` and ``survey.csv`` -- one row per region (see
  :func:`survey_table`);
* ``survey.png`` and ``survey.pdf`` -- the mass-to-flux ratio of every region
  and the field strength against radius (or surface density).

Reproducible: each region is sampled with its own seed, :func:`region_seed`
of the run seed (``[sampler] seed`` or ``--seed``) and the region name, so a
region gets the same chain on any cluster, in any order, and from
``infer fit --region NAME`` with that seed and the region's saved
``config.toml``.

Resumable and fault tolerant: a region is fitted in ``DIR/.partial-<folder>``
and renamed into place only once complete. Running the same survey again
skips the finished regions, continues interrupted chains from their last
checkpoint (and chains that stopped at ``max_steps`` without converging when
``max_steps`` is raised), and refits nothing else. A region whose catalog
rows or fit raise an :class:`~infer.errors.InferError` is recorded with its
message in the ``error`` column; the others go on. Tasks lost with a worker
are rerun by the scheduler (and resume from the checkpoint); other
exceptions are retried ``retries`` times, then recorded.

Per-region conditions: a region whose catalog metadata holds a
``local_conditions`` table (e.g. ``{stellar_mass: 0.6 solMass, radius: 70 au,
surface_density: 60 g/cm2}``, per group in the header's ``groups`` table)
gets its own priors, see :func:`region_config`.

The workers must see the same file system as the client (catalog paths are
not needed on the workers, the output folder is).

Modules: :mod:`.regions` (catalogs, names, seeds, per-region priors), :mod:`.tasks` (one
region's fit and folder state), :mod:`.cluster` (the Dask client and the task loop),
:mod:`.table` and :mod:`.figure` (survey.ecsv/.csv, survey.png/.pdf), :mod:`.run`.
"""

from __future__ import annotations

from .figure import survey_figure
from .regions import RegionEntry, folder_names, read_regions, region_config, region_seed
from .run import SurveyResult, run_survey
from .table import SUMMARY_ORDER, TABLE_NAMES, survey_table

__all__ = ["SurveyResult", "RegionEntry", "run_survey", "region_seed", "region_config", "folder_names",
           "read_regions", "survey_table", "survey_figure", "TABLE_NAMES", "SUMMARY_ORDER"]
