"""The replay room: trace I/O, replay through the core, metrics, plots, baselines, the benchmark suite."""
