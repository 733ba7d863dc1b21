"""The science behind a formula check: pure functions, no I/O, no formula objects.

Modules: ``hlb`` (blend and required HLB, emulsifier proportions, HLB classes, estimates),
``emulsion_type`` (Bancroft's rule), ``soap`` (soap formed in the batch), ``packing`` (volume
fraction and packing limits), ``interface`` (interfacial area and emulsifier coverage), ``stokes``
(creaming speed) and ``hld`` (Salager's hydrophilic-lipophilic deviation). Each states its units.
"""
