import sys, pathlib; sys.path.insert(0, str(pathlib.Path(__file__).resolve().parents[1]))

import os  # noqa: E402

# The automatic N-body step of `archsys report` (--nbody auto) integrates 64 draws whenever a system is
# outside the analytic criteria's domain; most tests are about other things, so the suite turns the
# default off (the ARCHSYS_NBODY variable, README) and the dynamics tests ask for N-body explicitly.
os.environ.setdefault("ARCHSYS_NBODY", "0")
