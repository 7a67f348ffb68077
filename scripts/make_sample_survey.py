"""Regenerate the bundled demo survey.

Usage: python scripts/make_sample_survey.py [OUT_DIR]

OUT_DIR defaults to sample_survey/ at the repository root. The files are
written by :func:`routesag.sample.write_sample_survey`; the figures in
OUT_DIR/README.md (if there is one) are then regenerated from a run of the
sample by :func:`routesag.sample_figures.update_readme`.
"""

import argparse
import sys
from pathlib import Path

REPO_ROOT = Path(__file__).resolve().parent.parent
# Run from a checkout without installing: make the package importable.
if str(REPO_ROOT) not in sys.path:
    sys.path.insert(0, str(REPO_ROOT))

from routesag.sample import write_sample_survey  # noqa: E402
from routesag.sample_figures import update_readme  # noqa: E402


def main(argv=None):
    parser = argparse.ArgumentParser(description="Write the routesag demo survey files.")
    parser.add_argument("out_dir", nargs="?", default=str(REPO_ROOT / "sample_survey"),
                        help="target folder (default: sample_survey/ at the repo root)")
    args = parser.parse_args(argv)
    project = write_sample_survey(args.out_dir)
    readme = project.parent / "README.md"
    if readme.is_file():  # its figures come from a run of the sample, so they cannot drift
        update_readme(readme, project)
    print(f"wrote {project.parent}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
