"""Physics: the boundary-element field solver, the finger model, materials and parasitics.

SI units inside; pF/fF and mm at the edges (names say which).
"""
