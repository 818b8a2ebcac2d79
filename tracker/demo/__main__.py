"""``python -m tracker.demo [FOLDER]``: regenerate the demo files (default: sample_data/):
the six CSV files and the castings' STL models (in castings/)."""

import sys

from tracker.demo.castings import write_castings
from tracker.demo.files import default_out_dir, generate

out = sys.argv[1] if len(sys.argv) > 1 else default_out_dir()
generate(out)
write_castings(out)
