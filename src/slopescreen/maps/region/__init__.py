"""The regional run: the scenario file, soils, design rainfall, the cached terrain step, the
tile job and its per-tile maths, runners, one scenario's run and the engine.
"""
