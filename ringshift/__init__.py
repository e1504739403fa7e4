"""ringshift: ring-current ¹H NMR shifts of π-conjugated rings.

Public API (kept small; see :mod:`ringshift.api`)::

    import ringshift as r
    pred = r.predict("c1ccccc1", conformers=1)        # SMILES, .mol/.sdf/.xyz path or Structure
    res = r.compare("mol.sdf", "peaks.csv", claim="aromatic")
    r.report(res, out_dir="mol_report")

:func:`load_structure`, :func:`predict`, :func:`read_peaks`, :func:`compare`, :func:`report`.

``ringshift.compare`` and ``ringshift.report`` are these functions, although subpackages of the same
names exist: import from the subpackages with ``from ringshift.compare.run import run_compare`` or
``from ringshift.report import json``, not through attribute chains such as
``ringshift.report.json``. The subpackages are imported (cheaply: their ``__init__`` modules hold no
code of weight) before the functions are bound, so that a later import of a submodule does not
replace the function by the package.

``import ringshift`` loads no RDKit, NumPy or SciPy; they load on the first call.
"""

from ringshift import compare as _compare_package  # noqa: F401  (bind the subpackages first, see above)
from ringshift import report as _report_package  # noqa: F401
from ringshift.api import compare, load_structure, predict, read_peaks, report

del _compare_package, _report_package

__version__ = "0.1.0"

__all__ = ["load_structure", "predict", "read_peaks", "compare", "report"]
