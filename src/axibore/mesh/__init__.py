"""Meshing: Gmsh meridional meshes read back into the finite-volume FVMesh.

session.py (the Gmsh session, generate-and-read), loop.py (unstructured meshes of a loop, size
fields), mapped.py (transfinite quad blocks of a bore), build.py (a profile's mesh: the choice
between them, the target size, the cell count before meshing), moving.py (node moves of a fixed
topology for free boundaries), fvmesh.py (the finite-volume view).
"""

from .build import MeshBuild, expected_cells, mesh_profile, target_size
from .fvmesh import FVMesh, MeshError
from .loop import mesh_loop
from .session import gmsh_session

__all__ = ["FVMesh", "MeshBuild", "MeshError", "expected_cells", "gmsh_session", "mesh_loop", "mesh_profile", "target_size"]
