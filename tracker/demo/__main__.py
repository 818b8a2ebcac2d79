"""``python -m tracker.demo [FOLDER]``: regenerate the demo files (default: sample_data/)."""

import sys

from tracker.demo.files import default_out_dir, generate

generate(sys.argv[1] if len(sys.argv) > 1 else default_out_dir())
