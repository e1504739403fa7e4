"""ringshift: ring-current ¹H NMR shifts of π-conjugated rings.

Public API (kept small; see :mod:`ringshift.api`)::

    import ringshift as r
    pred = r.predict("c1ccccc1", conformers=1)        # SMILES, .mol/.sdf/.xyz path or Structure
    res = r.compare("mol.sdf", "peaks.csv", claim="aromatic")
    r.report(res, out_dir="mol_report")

:func:`load_structure`, :func:`predict`, :func:`read_peaks`, :func:`compare`, :func:`report`, and
:func:`write_nmredata` (the assignment of a comparison in the open NMReDATA format).

The stages are subpackages (``io``, ``geometry``, ``pi``, ``fields``, ``shifts``, ``spectra``,
``comparison``, ``reporting``, ``runners``); their names differ from the functions ``compare`` and
``report``, so ``ringshift.compare`` is always the function and ``ringshift.reporting.json`` always the
module.

``import ringshift`` loads no RDKit, NumPy or SciPy; they load on the first call.
"""

from ringshift.api import compare, load_structure, predict, read_peaks, report, write_nmredata

__version__ = "0.1.0"

__all__ = ["load_structure", "predict", "read_peaks", "compare", "report", "write_nmredata"]
