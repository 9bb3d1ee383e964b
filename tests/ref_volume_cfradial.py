#!/usr/bin/env python3
"""ref_volume_cfradial.py — a volume written by rainprint opened with general-purpose
readers (netCDF4-python and xarray, Debian python3-netcdf4 / python3-xarray, and
ncdump from netcdf-bin) and checked against the CF/Radial 1.4 convention: every
required variable of a fixed ground radar, the instrument_parameters, every field's
units and fill value, sweep indices that partition the rays, and gate_height_m against
the 4/3-earth formula (Doviak & Zrnic 1993 eqs. 2.28a/b, from memory) recomputed with
NumPy.

The volume is written by `test_volume_file --write SCENARIO OUT` (the build folder's
test binary) from examples/shadow-cell-x/scene.yaml (X band, LDR, beam filling).

Usage: ref_volume_cfradial.py <rainprint tool> <build dir>   (the tool is not used)
Prints one line per check and closes with "N passed, N failed"; exits 1 on failure.
"""
import os
import subprocess
import sys
import tempfile

import numpy as np

try:
    import netCDF4
    import xarray as xr
except ImportError as e:  # the packages are in scripts/setup.sh
    print(f"missing reader: {e}")
    print("0 passed, 1 failed")
    sys.exit(1)

REQUIRED = {
    # name: (dims, units or None)
    "volume_number": ((), None),
    "time_coverage_start": (("string_length",), None),
    "time_coverage_end": (("string_length",), None),
    "latitude": ((), "degrees_north"),
    "longitude": ((), "degrees_east"),
    "altitude": ((), "meters"),
    "time": (("time",), None),
    "range": (("range",), "meters"),
    "sweep_number": (("sweep",), None),
    "sweep_mode": (("sweep", "string_length"), None),
    "fixed_angle": (("sweep",), "degrees"),
    "sweep_start_ray_index": (("sweep",), None),
    "sweep_end_ray_index": (("sweep",), None),
    "azimuth": (("time",), "degrees"),
    "elevation": (("time",), "degrees"),
}
INSTRUMENT = ["frequency", "prt", "nyquist_velocity", "n_samples", "radar_beam_width_h",
              "radar_beam_width_v", "polarization_mode"]
# The convention's standard names and units of the observed fields.
FIELDS = {
    "DBZ": ("equivalent_reflectivity_factor", "dBZ"),
    "VEL": ("radial_velocity_of_scatterers_away_from_instrument", "m/s"),
    "WIDTH": ("doppler_spectrum_width", "m/s"),
    "ZDR": ("log_differential_reflectivity_hv", "dB"),
    "LDRH": ("log_linear_depolarization_ratio_h", "dB"),
    "PHIDP": ("differential_phase_hv", "degrees"),
    "KDP": ("specific_differential_phase_hv", "degrees/km"),
    "RHOHV": ("cross_correlation_ratio_hv", "1"),
    "SNR": ("signal_to_noise_ratio", "dB"),
}
TRUTH = ["truth_zh_dbz", "truth_zdr_db", "truth_kdp_deg_km", "truth_ah_db_km",
         "truth_adp_db_km", "truth_delta_hv_deg", "truth_velocity_ms", "truth_width_ms",
         "truth_rain_rate_mm_h", "truth_lwc_g_m3", "truth_d0_mm", "truth_dm_mm",
         "truth_nw_m3_mm", "truth_mu", "truth_temperature_c", "gate_height_m",
         "truth_gate_flag"]


def main():
    build = sys.argv[2] if len(sys.argv) > 2 else "."
    src = os.environ.get("RP_SOURCE_DIR", os.path.join(os.path.dirname(__file__), ".."))
    exe = os.path.join(build, "test_volume_file")
    scen = os.path.join(src, "examples", "shadow-cell-x", "scene.yaml")
    passed = failed = 0

    def check(name, ok, detail=""):
        nonlocal passed, failed
        if ok:
            passed += 1
            print(f"ok   {name}")
        else:
            failed += 1
            print(f"FAIL {name} {detail}")

    with tempfile.TemporaryDirectory() as tmp:
        out = os.path.join(tmp, "shadow.nc")
        run = subprocess.run([exe, "--write", scen, out], capture_output=True, text=True,
                             check=False)
        if run.returncode != 0:
            print(run.stderr)
            print("0 passed, 1 failed")
            return 1
        dump = subprocess.run(["ncdump", "-h", out], capture_output=True, text=True,
                              check=False)
        check("ncdump -h opens the file", dump.returncode == 0, dump.stderr)

        ds = netCDF4.Dataset(out)
        check("Conventions names CF/Radial-1.4",
              "CF/Radial-1.4" in getattr(ds, "Conventions", ""))
        check("version is 1.4", getattr(ds, "version", "") == "1.4")
        for att in ["title", "institution", "references", "source", "history", "comment",
                    "instrument_name", "site_name", "scan_name", "scenario", "seed",
                    "rainprint_version", "caution"]:
            check(f"global attribute {att}", hasattr(ds, att))
        check("the caution names gauges and the local authority",
              "gauges" in ds.caution and "authority" in ds.caution)
        for name, (dims, units) in REQUIRED.items():
            ok = name in ds.variables and ds.variables[name].dimensions == dims
            check(f"required variable {name}{dims}", ok)
            if ok and units is not None:
                check(f"{name} units {units}", getattr(ds.variables[name], "units", None) == units)
        for name in INSTRUMENT:
            check(f"instrument parameter {name}", name in ds.variables)
        nrays = len(ds.dimensions["time"])
        start = ds.variables["sweep_start_ray_index"][:].astype(int)
        end = ds.variables["sweep_end_ray_index"][:].astype(int)
        covered = np.concatenate([np.arange(a, b + 1) for a, b in zip(start, end)])
        check("sweep indices partition the rays",
              covered.size == nrays and np.array_equal(covered, np.arange(nrays)))
        names = ds.field_names.split(",")
        for f, (std, units) in FIELDS.items():
            ok = f in ds.variables
            check(f"field {f} present", ok)
            if not ok:
                continue
            v = ds.variables[f]
            check(f"{f} dims (time, range)", v.dimensions == ("time", "range"))
            check(f"{f} standard_name", getattr(v, "standard_name", None) == std)
            check(f"{f} units {units}", getattr(v, "units", None) == units)
            check(f"{f} has _FillValue", "_FillValue" in v.ncattrs())
            check(f"{f} listed in field_names", f in names)
        check("VEL folds at the Nyquist velocity",
              ds.variables["VEL"].field_folds == "true"
              and np.isclose(ds.variables["VEL"].fold_limit_upper,
                             ds.variables["nyquist_velocity"][0]))
        for f in TRUTH:
            ok = f in ds.variables
            check(f"truth field {f} present with units", ok and "units" in ds.variables[f].ncattrs())
        ds.close()

        x = xr.open_dataset(out)
        check("xarray opens the file", "DBZ" in x.data_vars)
        dbz = x["DBZ"].values
        check("xarray turns fill values into NaN", np.isnan(dbz).any() and np.isfinite(dbz).any())
        check("observed DBZ below truth (attenuation, X band) on average",
              np.nanmean(x["truth_zh_dbz"].values - dbz) > 0.0)
        # gate heights against the 4/3-earth formula (within 1 m; float storage ~0.05 m)
        ke_a = 4.0 / 3.0 * 6371000.0
        r = x["range"].values.astype(float)[None, :]
        el = np.deg2rad(x["elevation"].values.astype(float))[:, None]
        h = np.sqrt(r ** 2 + ke_a ** 2 + 2 * r * ke_a * np.sin(el)) - ke_a + float(x["altitude"])
        err = np.nanmax(np.abs(x["gate_height_m"].values - h))
        check(f"gate_height_m within 1 m of the 4/3-earth formula (max {err:.3f} m)", err < 1.0)
        x.close()

    print(f"{passed} passed, {failed} failed")
    return 0 if failed == 0 and passed > 0 else 1


if __name__ == "__main__":
    sys.exit(main())
