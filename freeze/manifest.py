# Freeze tinytherm into a MicroPython firmware image (bytecode in flash, not RAM).
#
# The core alone (the estimator and what it imports), as the whole manifest:
#
#     make -C ports/esp32 BOARD=ESP32_GENERIC \
#         FROZEN_MANIFEST=/path/to/tinytherm/freeze/manifest.py
#
# or from your board's own manifest, with the optional parts a product uses:
#
#     include("/path/to/tinytherm/freeze", forecast=True, sensors=True)
#
# Options: profile, air, forecast, planner, sensors (all False by default). The
# module lists are read from the parts' package.json files, the same lists
# mip installs (tools/build_mpy.py writes them), so freezing and installing
# cannot drift apart. Frozen modules are compiled by the firmware's own
# mpy-cross at opt level 3 (asserts dropped; the core validates with
# ValueError and status codes, never assert). Import them as usual
# (``from tinytherm.estimator import ThermalEstimator``) and keep no copy of
# them on the board's filesystem where sys.path finds it before '.frozen'
# (the current folder, on recent ports): that copy would load into RAM.
# Checked by tests/test_freeze.py as far as the unix port can.
import json

options.defaults(profile=False, air=False, forecast=False, planner=False, sensors=False)

# The port's own frozen modules (skipped if the board manifest included them).
include("$(PORT_DIR)/boards/manifest.py")


def _modules(package_json):
    """File names in tinytherm/ that a package.json lists (paths from this folder)."""
    with open(package_json) as fh:
        return [dest.split("/", 1)[1] for dest, _ in json.load(fh)["urls"]]


files = _modules("../package.json")
for part in ("profile", "air", "forecast", "planner", "sensors"):
    if getattr(options, part):
        for name in _modules("../packages/%s/package.json" % part):
            if name not in files:
                files.append(name)

package("tinytherm", files=files, base_path="..", opt=3)
