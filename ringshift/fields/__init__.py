"""Shielding kernels: pure NumPy, arrays in and arrays out (σ_iso in ppm per nA/T of diatropic current).

* :mod:`~ringshift.fields.polygon`: exact polygon Biot–Savart (double loop) and the segment field.
* :mod:`~ringshift.fields.circular`: Johnson–Bovey circular loops and the Pople point dipole.
* :mod:`~ringshift.fields.haigh_mallion`: the Haigh–Mallion geometric factor.
* :mod:`~ringshift.fields.network`: Biot–Savart over a network of bond currents.
* :mod:`~ringshift.fields.registry`: model names, their descriptions and the per-proton geometric factors.
"""

from ringshift.fields.circular import johnson_bovey_shielding, point_dipole_shielding
from ringshift.fields.haigh_mallion import haigh_mallion_shielding
from ringshift.fields.network import network_shielding
from ringshift.fields.polygon import polygon_shielding, segment_field

__all__ = ["polygon_shielding", "segment_field", "johnson_bovey_shielding", "point_dipole_shielding",
           "haigh_mallion_shielding", "network_shielding"]
