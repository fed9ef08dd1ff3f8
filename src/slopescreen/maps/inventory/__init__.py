"""Known landslides against a finished run: reading inventories, scoring, back-analysis,
calibration and sensitivity.
"""
