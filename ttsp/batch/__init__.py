"""Many campaigns in one run: parallel, fault-isolated, resumable, optionally on a Dask cluster.

Layer 5 (a shell), a package of one idea per module: ``manifest`` (the campaigns and their
validation), ``worker`` (one campaign as a worker builds it), ``rows`` (a campaign's row of the
results table), ``results_table`` (the table and its files), ``resume`` (what is built
already), ``pool`` (local worker processes), ``dask_cluster``, ``folder`` (lock and safety of
the batch folder), ``progress`` (stderr) and ``run`` (:func:`run_batch` as named steps).

A *manifest* lists the campaigns; every campaign is built by :func:`ttsp.runner.run_build`,
exactly as ``ttsp build`` builds it, into its own output folder ``OUT/<id>/`` (same contract:
``summary.json``, the CSV tables and, with figures, the figures and ``report.html``). One results
table for the whole batch, one row per campaign in manifest order, is written as
``OUT/results.jsonl`` and ``OUT/results.csv``.

Manifest
    A CSV file (comma, semicolon or tab) or a JSON Lines file (one object per line) with the
    columns ``id`` and ``path`` and, optionally, per-campaign options: every field of
    :class:`ttsp.workflow.BuildOptions` (``reference_temperature_C``, ``law``, ``vertical``,
    ``expansion_coefficient_per_K``, ``shift_on``, ``gaps``, ``prony_terms_per_decade``,
    ``glass_transition_C``, ``spectrum`` (true/false), ``master_curve``
    (auto/spectrum/splines), ``cross_validation`` (true/false), ``material``, ...; the list is
    :data:`OPTION_COLUMNS`, read from the dataclass) and ``modulus_kind`` (``tensile`` or
    ``shear``). Numbers, words and true/false go in any manifest; a list or a mapping
    (``exclude_C``, ``fixed_log10_aT``) only as a JSON value in a JSON Lines manifest. An empty
    cell (or ``null``) means the default. ``path`` is a file or a folder of one campaign, relative
    to the manifest's folder; in JSON Lines it may also be a list of files. Blank lines and lines
    starting with ``#`` are ignored. Or a *folder of campaigns*: each table file (``.csv``,
    ``.txt``, ``.xlsx`` ...) or sub-folder in it is one campaign whose id is its name (without the
    suffix); hidden entries and folders that hold ttsp outputs are left out.

Ids name output folders, so they must be unique (also ignoring letter case, for file systems that
ignore it) and usable as folder names everywhere: letters, digits, ``_``, and inside also
``. - + = , @ ( )`` and spaces; at most 100 characters.

Fault isolation
    A campaign that cannot be built (unreadable file, bad data, a failed fit, any exception) gets
    ``status`` ``failed`` and a one-line ``error``; the batch goes on. A worker process that dies
    (a crash in a native library, the kernel's out-of-memory killer) breaks the process pool; the
    campaigns that were in flight are then retried one at a time in a fresh worker, and only the
    one that kills its worker again is recorded as failed; a new pool takes the rest.

Resuming
    A campaign whose output folder already holds a complete build (``summary.json`` with the same
    ``input_sha256``, the same options and the same ttsp version; ``report.html`` too when figures
    are asked for) is not rebuilt but reported from its ``summary.json`` with ``skipped`` true,
    unless ``force``. So a batch that was interrupted continues where it stopped, and a campaign
    whose input file or options changed is rebuilt. Output folders appear whole or not at all
    (:func:`ttsp.io.atomic.atomic_output_dir`); the results table is replaced atomically as
    campaigns finish.

Safety
    The batch folder is locked for the run (a second batch into it fails at once) and carries a
    ``.ttsp-output`` marker of kind ``batch`` with the hashes of the results files: a
    ``results.csv`` or ``results.jsonl`` that ttsp did not write, or that was edited since, is
    never overwritten (the batch stops before any work). A campaign folder that is not an
    untouched ttsp output is a ``failed`` row, never replaced. SIGTERM kills the workers at once,
    records the finished campaigns and raises :class:`ttsp._lifetime.Terminated` (exit 143 on
    the command line); workers also end when the batch's process dies (``kill -9``). Text cells
    of ``results.csv`` that a spreadsheet would run as formulas get a leading ``'``.

Results table columns
    ``id``, ``status`` (``ok`` | ``failed``), ``error`` (empty when ok), ``skipped``, ``path``,
    ``input_sha256``, ``domain``, ``modulus_kind``, ``isotherms``, ``reference_temperature_C``,
    ``law_model``, ``law_<parameter>`` and ``law_<parameter>_stderr`` for each parameter of the
    fitted law (``law_C1``, ``law_C2_K``, ``law_activation_energy_kJ_per_mol`` ...; absolute
    temperatures in °C like every temperature of the table: ``law_glass_transition_C``,
    ``law_T_inf_C``; C2 and B are temperature differences, in K),
    ``prony_terms``, ``prony_rms_percent``, ``master_curve`` (``spectrum`` | ``splines``),
    ``collapse_ratio`` (neighbour mismatch over chained pairwise shifts'),
    ``cv_median_rms_percent_at_law_aT``, ``cv_worst_rms_percent_at_law_aT`` and
    ``cv_median_rms_percent_at_best_aT`` (held-out isotherms; empty without cross-validation),
    ``checks_worst`` (``pass`` | ``warn`` | ``fail``),
    ``checks_failed`` and ``checks_warned`` (check names joined by ``;``), ``warnings`` (their
    count), ``elapsed_s`` (wall time of this run for the campaign).

Worker processes run single-threaded BLAS (``OPENBLAS_NUM_THREADS`` and its kin are set to 1 for
them unless already set): the parallelism is across campaigns, and the small dense problems of
one build run slower, not faster, with several BLAS threads competing for the same cores.
"""

from __future__ import annotations

from .folder import batch_lock, check_results_files
from .manifest import MANIFEST_COLUMNS, OPTION_COLUMNS, BatchItem, read_manifest
from .progress import BatchProgress
from .results_table import RESULT_FILES, ResultsTable
from .resume import reusable_summary
from .rows import failed_row, row_from_summary
from .run import batch_exit_code, run_batch
from .worker import build_one

__all__ = ["MANIFEST_COLUMNS", "OPTION_COLUMNS", "RESULT_FILES", "BatchItem", "batch_exit_code",
           "read_manifest", "run_batch"]

# The names these had when the batch was one module, kept for the tests and benchmarks that
# reach into it (ttsp.batch._build_one, ._Table, ...).
_build_one = build_one
_failed_row = failed_row
_row_from_summary = row_from_summary
_reusable = reusable_summary
_batch_lock = batch_lock
_check_results_files = check_results_files
_Table = ResultsTable
_Reporter = BatchProgress
