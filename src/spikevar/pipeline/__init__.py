"""Workflow glue that the Snakefile and rule scripts call: rule-job logging and clean exits,
what each rule needs from sheet and config, code fingerprints, the failed-run handler and the
end-of-run message.

May import: ``base``, ``inputs``, ``metrics``, ``recovery``, ``population``, ``cohort``,
``figures``.
(Checked by ``tests/test_layout.py``.)
"""
