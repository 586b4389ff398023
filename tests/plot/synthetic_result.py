"""SYNTHETIC TEST DATA for tests/test_plot.sh: invented numbers, not output of the physics.

    synthetic_result.py OUT.h5

Writes a small result file in the layout of src/io/hdf5_output.cpp (/axes/distance_m, /gaussian,
/protocols/<name>/{status, method, done, figures, axes/}, /verdict attributes) in which the bare
link becomes separable at 6 m: beyond it the heralded protocols are "separable input" (status 5,
E_N = 0, photon-number path), before it one failure of each kind (status 1 at 2 m for every
setting, status 2 at 3 m for one setting, status 4 at 4.5 m for every setting). The distances,
a tap's transmissivities and a counter's dark rates (three decades) are non-uniform on purpose.
"""
import sys

import h5py
import numpy as np

DISTANCES = np.array([1.0, 2.0, 3.0, 4.5, 6.0, 8.0, 11.0, 15.0])
CROSSING = 6.0
TAPS = np.array([0.8, 0.9, 0.95, 0.99])
DARKS = np.array([10.0, 100.0, 1e3, 1e4])


def write(path):
    d = DISTANCES
    en_bare = np.clip(1.2 * (CROSSING - d) / (CROSSING - d[0]), 0.0, None)
    with h5py.File(path, "w") as f:
        f.attrs["title"] = "Synthetic test data: separable beyond 6 m"
        f.attrs["status_codes"] = ("0 ok, 1 truncation budget missed, 2 herald probability below round-off, "
                                   "3 not computed, 4 invalid result, 5 separable input")
        ax = f.create_dataset("axes/distance_m", data=d)
        ax.attrs["units"], ax.attrs["description"] = "m", "distance"
        for key, values, units in (("log_negativity", en_bare, "ebit"), ("fidelity", 0.5 + 0.2 * en_bare, "1"),
                                   ("plob_ebits", 0.8 * en_bare + 0.1, "ebit/use"),
                                   ("relay_log_negativity", 0.6 * en_bare, "ebit"),
                                   ("relay_fidelity", 0.5 + 0.1 * en_bare, "1")):
            f.create_dataset(f"gaussian/{key}", data=values).attrs["units"] = units
        v = f.create_group("verdict")
        v.attrs["target_m"] = 3.0
        v.attrs["bare_log_negativity"] = 0.8
        v.attrs["bare_survival_distance_m"] = CROSSING
        v.attrs["bare_survival_distance_kind"] = "crossed"

        def protocol(key, name, steps, en, status, method, axes=()):
            p = f.create_group(f"protocols/{key}")
            p.attrs["name"] = name
            p.attrs["dims"] = ",".join(["distance_m"] + [a for a, _ in axes])
            for a, values in axes:
                ds = p.create_dataset(f"axes/{a}", data=values)
                ds.attrs["units"], ds.attrs["description"] = "1", a
            for i, kind in enumerate(steps):
                p.create_group(f"steps/{i + 1}_{kind}").attrs["kind"] = kind
            ok = np.isin(status, (0, 5))
            figures = dict(log_negativity=np.where(ok, en, 0.0), negativity=np.where(ok, en, 0.0),
                           fidelity=np.where(ok, 0.5 + 0.2 * en, 0.0),
                           success_probability=np.where(status == 4, 0.0, 0.05),
                           heralding_rate_hz=np.where(status == 4, 0.0, 1e5))
            for k, values in figures.items():
                ds = p.create_dataset(k, data=values)
                ds.attrs["units"] = {"log_negativity": "ebit", "heralding_rate_hz": "Hz"}.get(k, "1")
                ds.attrs["description"] = k.replace("_", " ")
            p.create_dataset("status", data=status.astype(np.int32))
            p.create_dataset("method", data=method.astype(np.int32))
            p.create_dataset("done", data=np.ones(status.shape, dtype=np.uint8))

        beyond = d >= CROSSING
        protocol("bare", "bare", ["link"], en_bare, np.zeros(d.shape, int), np.ones(d.shape, int))
        for key, name, axis, values in (("subtract_both", "subtract both", "tap_b.transmissivity", TAPS),
                                        ("subtract_a", "subtract a", "counters.lab.dark_rate_hz", DARKS)):
            shape = (d.size, values.size)
            en = en_bare[:, None] * (1.0 + 0.3 * np.linspace(0.0, 1.0, values.size)[None, :])
            en[beyond, :] = 0.0
            status = np.where(beyond[:, None], 5, 0) * np.ones(shape, int)
            method = np.where(beyond[:, None], 2, 4) * np.ones(shape, int)
            status[1, :] = 1      # every setting at 2 m: truncation budget missed
            status[2, 0] = 2      # one setting at 3 m: herald probability below round-off
            status[3, :] = 4      # every setting at 4.5 m: invalid result
            protocol(key, name, ["link", "tap", "tap"], en, status, method, axes=[(axis, values)])


if __name__ == "__main__":
    write(sys.argv[1])
