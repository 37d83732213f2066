#!/usr/bin/env python3
"""Reference signed distances to saddle_patch.stl computed by Open3D.

usage (from this folder): /usr/bin/python3 open3d_reference.py

Reads saddle_patch.stl (written by saddlecheck's WriteSTL, see README.md) with
Open3D's own STL reader, builds a RaycastingScene, draws deterministic query
points near the mesh and beyond its edges, and writes open3d_reference.csv:

    x,y,z,d        STL file coordinates (metres, relative to the file's origin)
                   and the signed distance in metres

The distance is |q - c| for Open3D's closest point c (compute_closest_points),
signed by the closest triangle's stored normal (the sign rule of an open patch:
compute_signed_distance counts ray crossings and is meant for closed meshes).
The scene is float32, so the mesh and the points are shifted by the mesh's
minimum corner in float64 first.
"""
import numpy as np
import open3d as o3d

SEED = 20261201
N_NEAR, N_FAR, N_BEYOND = 160, 20, 20

mesh = o3d.io.read_triangle_mesh("saddle_patch.stl")
tri = np.asarray(mesh.triangles)
ver = np.asarray(mesh.vertices, dtype=np.float64)
print(f"open3d {o3d.__version__}: read {len(tri)} triangles, {len(ver)} vertices")

shift = ver.min(axis=0)
scene = o3d.t.geometry.RaycastingScene()
scene.add_triangles(o3d.core.Tensor((ver - shift).astype(np.float32)),
                    o3d.core.Tensor(tri.astype(np.uint32)))

rng = np.random.default_rng(SEED)
# Points on random triangles, moved along the face normal: small offsets
# (mm to dm) and a few far ones (metres), then points beyond the edges.
k = rng.integers(0, len(tri), N_NEAR + N_FAR)
a, b, c = ver[tri[k, 0]], ver[tri[k, 1]], ver[tri[k, 2]]
u, v = rng.random((2, len(k)))
flip = u + v > 1
u[flip], v[flip] = 1 - u[flip], 1 - v[flip]
on = a + u[:, None] * (b - a) + v[:, None] * (c - a)
n = np.cross(b - a, c - a)
n /= np.linalg.norm(n, axis=1, keepdims=True)
off = np.r_[rng.uniform(-0.2, 0.2, N_NEAR), rng.uniform(-3, 3, N_FAR)]
near = on + off[:, None] * n
lo, hi = ver.min(axis=0), ver.max(axis=0)
side = rng.integers(0, 4, N_BEYOND)
t = rng.random(N_BEYOND)
bx = np.where(side == 0, lo[0] - rng.uniform(0.1, 1, N_BEYOND),
              np.where(side == 1, hi[0] + rng.uniform(0.1, 1, N_BEYOND), lo[0] + t * (hi[0] - lo[0])))
by = np.where(side == 2, lo[1] - rng.uniform(0.1, 1, N_BEYOND),
              np.where(side == 3, hi[1] + rng.uniform(0.1, 1, N_BEYOND), lo[1] + t * (hi[1] - lo[1])))
bz = rng.uniform(lo[2], hi[2], N_BEYOND)
q = np.r_[near, np.stack([bx, by, bz], axis=1)]

ans = scene.compute_closest_points(o3d.core.Tensor((q - shift).astype(np.float32)))
diff = (q - shift) - ans["points"].numpy().astype(np.float64)
sign = np.sign(np.einsum("ij,ij->i", diff, ans["primitive_normals"].numpy()))
d = sign * np.linalg.norm(diff, axis=1)

with open("open3d_reference.csv", "w") as out:
    out.write(f"# open3d {o3d.__version__} RaycastingScene.compute_closest_points on saddle_patch.stl, seed {SEED}\n")
    out.write("x,y,z,d\n")
    for p, dd in zip(q, d):
        out.write(f"{p[0]:.9f},{p[1]:.9f},{p[2]:.9f},{dd:.9f}\n")
print(f"wrote open3d_reference.csv: {len(q)} points")
