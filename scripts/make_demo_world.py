"""Regenerate the bundled demo world in polygons_demo/ and its past stages in
polygons_demo/stages/ (deterministic; see torque.demo).

    python scripts/make_demo_world.py [OUTDIR]
"""

import json
import sys
from pathlib import Path

from torque.demo import BUNDLED, write, write_series

if __name__ == "__main__":
    out = Path(sys.argv[1]) if len(sys.argv) > 1 else BUNDLED
    print(json.dumps(write(out), indent=2))
    print(json.dumps(write_series(out / "stages", out), indent=2))
