from typing import Any

min_temp_c: str
ambient_c: str
ambient_prior_c: str
ambient_prior_sd_c: str
heater: str
interval: str
probe_codes: str
quantum_c: str
restart_gap_s: str
setting: str
min_c: str
spike_window: str
drift: str
threshold: str
z_clip: str
scale_n: str
jump_z: str
p: str

def estimator(e: Any) -> str: ...
def guard(g: Any) -> str: ...
def detector(d: Any) -> str: ...
