"""The commands' work, chained: each job loads, checks, computes and writes.

``run.py`` is the main job (load → simulate → measure → limits → files, in a
safe order); ``response.py``, ``compare.py`` and ``fit.py`` are the bench
jobs (frequency response, a capture against the model, parts fitted to a
capture).  Jobs call the stages and the writers in ``output/``; nothing
below calls a job.
"""
