"""Meshing: Gmsh meridional meshes read back into the finite-volume FVMesh."""

from .fvmesh import FVMesh, MeshError

__all__ = ["FVMesh", "MeshError"]
