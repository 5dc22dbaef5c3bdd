#!/usr/bin/env python3
"""Reads a lathe field file with h5py (the HDF5 C library) and checks it.

Usage: h5check.py FILE.h5 EXPECTED.json

EXPECTED.json is written by tests/fieldfile.rs: the root attributes, and per
mode group its figures, grid size and one node of every component as Rust
wrote them. Checks, for every group: attributes present with the documented
types; coordinate arrays float64 of the grid's lengths and values; the six
components complex128 with their staggered shapes and coordinate names; one
value per component equal to what Rust wrote; abs_e_centres equal to the
same interpolation recomputed here with numpy. Prints one line per group and
"h5check: OK" at the end; exits 1 with the reasons otherwise.
"""
import json
import sys

import h5py
import numpy as np

# Component: (r half-integer?, z half-integer?), as in lathe_mesh::Component.
STAGGER = {
    "Er": (True, False),
    "Ephi": (False, False),
    "Ez": (False, True),
    "Hr": (False, True),
    "Hphi": (True, True),
    "Hz": (True, False),
}

failures = []


def check(ok, what):
    if not ok:
        failures.append(what)
    return ok


def is_str(v):
    return isinstance(v, str)


def is_int(v):
    return isinstance(v, (int, np.integer)) and not isinstance(v, (bool, np.bool_))


def is_real(v):
    return isinstance(v, (float, np.floating))


def main():
    path, expected_path = sys.argv[1], sys.argv[2]
    with open(expected_path) as fh:
        expected = json.load(fh)
    print(f"h5check: h5py {h5py.version.version}, HDF5 {h5py.version.hdf5_version}, numpy {np.__version__}")
    with h5py.File(path, "r") as f:
        for key in ("program", "version", "convention", "units"):
            v = f.attrs.get(key)
            check(is_str(v) and v == expected[key], f"root attribute {key} = {v!r}, expected {expected[key]!r}")
        check(is_int(f.attrs.get("mode_count")) and f.attrs["mode_count"] == len(expected["modes"]),
              f"root mode_count = {f.attrs.get('mode_count')!r}")
        groups = sorted(k for k in f.keys() if k.startswith("mode_"))
        check(groups == [m["name"] for m in expected["modes"]], f"groups {groups}")
        for exp in expected["modes"]:
            if exp["name"] in f:
                check_group(f[exp["name"]], exp)
    if failures:
        for x in failures:
            print("h5check: FAIL " + x)
        sys.exit(1)
    print("h5check: OK")


def check_group(g, exp):
    name = exp["name"]
    a = g.attrs
    before = len(failures)
    types = {
        "m": is_int, "frequency_hz": is_real, "q": is_real, "q_is_lower_bound": is_int,
        "label": is_str, "symmetry_plane": is_str, "wall_outer": is_str, "wall_bottom": is_str,
        "wall_top": is_str, "absorber_cells_outer": is_int, "absorber_cells_bottom": is_int,
        "absorber_cells_top": is_int, "nr": is_int, "nz": is_int, "dr": is_real, "dz": is_real,
        "z0": is_real, "transform_frequency_hz": is_real, "transform_samples": is_int,
        "normalisation": is_str,
    }
    for key, typed in types.items():
        if check(key in a, f"{name}: attribute {key} missing"):
            check(typed(a[key]), f"{name}: attribute {key} = {a[key]!r} has type {type(a[key]).__name__}")
    if len(failures) > before:
        return
    for key in ("m", "frequency_hz", "q", "label", "symmetry_plane", "nr", "nz"):
        check(a[key] == exp[key], f"{name}: {key} = {a[key]!r}, Rust wrote {exp[key]!r}")
    check(bool(a["q_is_lower_bound"]) == exp["q_is_lower_bound"], f"{name}: q_is_lower_bound")
    walls = [a["wall_outer"], a["wall_bottom"], a["wall_top"]]
    check(walls == exp["walls"], f"{name}: walls {walls}, Rust wrote {exp['walls']}")
    cells = [int(a["absorber_cells_outer"]), int(a["absorber_cells_bottom"]), int(a["absorber_cells_top"])]
    check(cells == exp["absorber_cells"], f"{name}: absorber cells {cells}, Rust wrote {exp['absorber_cells']}")
    nr, nz, dr, dz, z0 = int(a["nr"]), int(a["nz"]), float(a["dr"]), float(a["dz"]), float(a["z0"])
    coords = {
        "r_int": np.arange(nr + 1) * dr,
        "r_half": (np.arange(nr) + 0.5) * dr,
        "z_int": z0 + np.arange(nz + 1) * dz,
        "z_half": z0 + (np.arange(nz) + 0.5) * dz,
    }
    for key, want in coords.items():
        d = g[key]
        check(d.dtype == np.float64 and d.shape == want.shape, f"{name}/{key}: {d.dtype} {d.shape}")
        if d.shape == want.shape:
            check(np.allclose(d[...], want, rtol=1e-14, atol=1e-18), f"{name}/{key}: values")
    arrays = {}
    for comp, (rh, zh) in STAGGER.items():
        d = g[comp]
        shape = (nr if rh else nr + 1, nz if zh else nz + 1)
        check(d.dtype == np.complex128, f"{name}/{comp}: dtype {d.dtype}, expected complex128")
        check(d.shape == shape, f"{name}/{comp}: shape {d.shape}, expected {shape}")
        rn, zn = d.attrs.get("r_coordinate"), d.attrs.get("z_coordinate")
        check(rn == ("r_half" if rh else "r_int") and zn == ("z_half" if zh else "z_int"),
              f"{name}/{comp}: coordinates {rn!r}, {zn!r}")
        check(is_str(d.attrs.get("unit")) and is_str(d.attrs.get("azimuthal_factor")), f"{name}/{comp}: unit/azimuthal_factor")
        if a["symmetry_plane"] != "none":
            check(d.attrs.get("parity_about_plane") in ("even", "odd"), f"{name}/{comp}: parity_about_plane")
        u = d[...]
        arrays[comp] = u
        check(np.all(np.isfinite(u)), f"{name}/{comp}: non-finite values")
        v = exp["values"][comp]
        got = u[v["i"], v["j"]]
        same = lambda x, y: np.float64(x).tobytes() == np.float64(y).tobytes()
        check(same(got.real, v["re"]) and same(got.imag, v["im"]),
              f"{name}/{comp}[{v['i']},{v['j']}] = {got!r}, Rust wrote {v['re']!r}+{v['im']!r}j")
    if len(failures) > before:
        return
    # |E| at the cell centres, recomputed from the complex arrays.
    er, ephi, ez = arrays["Er"], arrays["Ephi"], arrays["Ez"]
    a_c = 0.5 * er[:, :-1] + 0.5 * er[:, 1:]
    b_c = 0.25 * ephi[:-1, :-1] + 0.25 * ephi[:-1, 1:] + 0.25 * ephi[1:, :-1] + 0.25 * ephi[1:, 1:]
    c_c = 0.5 * ez[:-1, :] + 0.5 * ez[1:, :]
    want = np.hypot(np.hypot(np.abs(a_c), np.abs(b_c)), np.abs(c_c))
    d = g["abs_e_centres"]
    check(d.dtype == np.float64 and d.shape == (nr, nz), f"{name}/abs_e_centres: {d.dtype} {d.shape}")
    if d.shape == (nr, nz):
        # Same operations in a different order of rounding: 1e-13 relative.
        check(np.allclose(d[...], want, rtol=1e-13, atol=1e-300), f"{name}/abs_e_centres: values")
    check(d.attrs.get("r_coordinate") == "r_half" and d.attrs.get("z_coordinate") == "z_half",
          f"{name}/abs_e_centres: coordinates")
    peak = np.unravel_index(np.argmax(d[...]), d.shape)
    print(f"h5check: {name}: m = {a['m']}, f = {a['frequency_hz'] / 1e9:.6f} GHz, Q = {a['q']:.3e}, "
          f"label = {a['label']!r}, plane = {a['symmetry_plane']}, grid {nr} x {nz}, "
          f"components complex128, max |E| at r = {coords['r_half'][peak[0]] * 1e3:.3f} mm, "
          f"z = {coords['z_half'][peak[1]] * 1e3:.3f} mm")


if __name__ == "__main__":
    main()
