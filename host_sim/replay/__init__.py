"""The replay room, the bottom of host_sim: trace I/O, replay through the core, metrics, plots, baselines, recordings."""
