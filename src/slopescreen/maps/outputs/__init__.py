"""What a run writes: output names, summaries, zones, palette, maps, figures and the report."""
