"""The public API: every job of the ``soacheck`` command, as a function that returns a result.

Each function here is what one command does, without the printing: the command parses
its options, calls the function and prints ``result.to_dict()`` (``--json``) or a table.
Nothing here prints, exits or writes a file unless asked (``out=``, ``export``).

Arguments use the names of the command line and the files (``case_temp`` in °C,
``pulse`` as ``"dc"``, ``"1ms"`` or seconds, ``duty`` as a fraction); a part is a
:class:`~soacheck.parts.Part`, a part id or a part folder; a stage is a
:class:`~soacheck.stage.Stage` or a stage file. Every problem a user can fix raises
:class:`~soacheck.errors.SoacheckError` with the line the command prints.

One room per topic, each function beside the result object it returns:

- :mod:`soacheck.api.options`     -- the argument types and their checks, shared by every function
- :mod:`soacheck.api.base`        -- :class:`Result`, the one shape of every result, and its helpers
- :mod:`soacheck.api.libraries`   -- the folders a ``library=`` names; ``parts`` (a DataFrame), ``part_rows`` (plain
  rows, no numpy or pandas)
- :mod:`soacheck.api.points`      -- ``load_part``, ``allowed_current``, ``check`` → ``CheckResult``
- :mod:`soacheck.api.traces`      -- ``trace`` → ``TraceCheckResult``
- :mod:`soacheck.api.stages`      -- ``load_stage``, ``discharge``, ``sweep`` → ``StageRunResult``;
  ``sharing`` → ``SharingResult``
- :mod:`soacheck.api.envelopes`   -- ``envelope`` → ``EnvelopeResult`` or ``SafeEnvelopeResult`` (limit-table export)
- :mod:`soacheck.api.comparisons` -- ``compare`` → ``CompareResult``
- :mod:`soacheck.api.plans`       -- ``run_plan`` → ``PlanResult``
- :mod:`soacheck.api.authoring`   -- ``lint`` → ``LintResult``

The public names are those of ``soacheck.__all__``; import them from ``soacheck``.
"""
