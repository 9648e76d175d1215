"""Run findings: one finding per cause, the true cause and its fix, the headline.

:func:`diagnose` turns a run's episodes, device summaries, event summary and the
engine's own findings, with the scenario, its layout and the static check
results, into the run's findings (grouped by place and cause, each cause with
the fix that mends it, what only follows from a cause tied to it by
``because``), its ``headline`` (the worst problems first, one line per cause)
and its verdict (:func:`sim.verdict.decide`, the one rule of every command).

Modules
-------
==============  ====================================================
symptoms        what each episode shows by itself (RF-RUN-001..005, 010)
groups          episodes grouped by place: count, first, last, worst figure
facts           the run's records and the layout's questions
causes/         the specific causes, one module each (RF-RUN-030..039, 041)
dark            districts dark for most of the run (RF-RUN-040)
static          the static errors a run must show (a short never cleared)
reported        the engine's own findings, grouped
headline        the causes ranked, one line each
diagnosis       the whole diagnosis (:func:`diagnose`)
text            numbers with their units
==============  ====================================================

Codes
-----
RF-RUN-001 .. RF-RUN-005, RF-RUN-010
    Symptoms of an episode (:mod:`sim.diagnose.symptoms`).
RF-RUN-030 .. RF-RUN-039, RF-RUN-041
    Causes (:mod:`sim.diagnose.causes`).
RF-RUN-040
    A device dark for most of the run that no short explains (:mod:`sim.diagnose.dark`).

Static findings brought into a run keep their own codes (``RF-FAULT-001`` ...), their
message marked ``static check (railfault check): ``.
"""
from sim.diagnose.symptoms import episode_findings, verdict_findings

__all__ = ["diagnose", "diagnose_facts", "Diagnosis", "episode_findings", "verdict_findings"]


def __getattr__(name):
    # the diagnosis needs the checks and the circuit: loaded on first use, so that
    # sim.trace can take the symptoms from here without them
    if name in ("diagnose", "diagnose_facts", "Diagnosis"):
        from sim.diagnose import diagnosis

        return getattr(diagnosis, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
