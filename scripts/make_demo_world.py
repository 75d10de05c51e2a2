"""Regenerate the bundled demo world in polygons_demo/ (deterministic; see torque.demo).

    python scripts/make_demo_world.py [OUTDIR]
"""

import json
import sys
from pathlib import Path

from torque.demo import BUNDLED, write

if __name__ == "__main__":
    print(json.dumps(write(Path(sys.argv[1]) if len(sys.argv) > 1 else BUNDLED), indent=2))
