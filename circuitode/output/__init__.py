"""What the user sees: text tables, JSON, CSV and PNG, and the main job chained.

``runner.py`` runs load → simulate → measure → limits → files in a safe
order; ``report.py`` writes text (≤ 80 columns) and JSON; ``plots.py`` draws
PNG with matplotlib imported lazily.  No numerics live here.
"""
