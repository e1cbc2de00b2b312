"""Writes a MeasurementSet from a night file with python-casacore only (no libwvr code): the
independent writer behind the MeasurementSet tests and the demo.

Layout: spectral window 0 holds the science band (one channel at the scans' observing
frequency by default, or channels at given offsets about it; two parallel hands XX and YY);
extra science windows follow; the last window holds the radiometer (one channel per
radiometer channel at LO + IF centre, width the IF bandwidth, one correlation), written as
autocorrelation rows whose real part is the brightness. Calibrator
visibilities have unit amplitude and the night's calibrator phase, for baseline
(ANTENNA1, ANTENNA2) = (pair[0], pair[1]). Antenna positions are the night's east/north/up
offsets turned into WGS84 Earth-fixed coordinates (NIMA TR8350.2 constants).

    /usr/bin/python3 ms_writer.py NIGHT.h5 OUT.ms
"""
import datetime
import shutil
import sys

import h5py
import numpy as np
from casacore import tables as ct

WGS84_A = 6378137.0
WGS84_F = 1.0 / 298.257223563
E2 = WGS84_F * (2.0 - WGS84_F)


def itrf_from_enu(enu_m, lat_deg, lon_deg, height_m):
    lat, lon = np.radians(lat_deg), np.radians(lon_deg)
    n = WGS84_A / np.sqrt(1.0 - E2 * np.sin(lat) ** 2)
    origin = np.array([(n + height_m) * np.cos(lat) * np.cos(lon),
                       (n + height_m) * np.cos(lat) * np.sin(lon),
                       (n * (1.0 - E2) + height_m) * np.sin(lat)])
    sl, cl, so, co = np.sin(lat), np.cos(lat), np.sin(lon), np.cos(lon)
    # Rows: unit vectors east, north, up in Earth-fixed coordinates.
    rotation = np.array([[-so, co, 0.0], [-sl * co, -sl * so, cl], [cl * co, cl * so, sl]])
    return origin + np.asarray(enu_m) @ rotation


def mjd_seconds(iso_utc):
    t = datetime.datetime.strptime(iso_utc, "%Y-%m-%dT%H:%M:%SZ")
    return (t - datetime.datetime(1858, 11, 17)).total_seconds()


def read_night(path):
    with h5py.File(path, "r") as f:
        n = {
            "epoch": f.attrs["time_epoch_utc"].decode() if isinstance(f.attrs["time_epoch_utc"], bytes)
            else str(f.attrs["time_epoch_utc"]),
            "names": list(f["array/antenna_names"].asstr()[()]),
            "enu": f["array/position_enu_m"][()],
            "lat": float(f["array"].attrs["reference_latitude_deg"]),
            "lon": float(f["array"].attrs["reference_longitude_deg"]),
            "height": float(f["array"].attrs["reference_height_m"]),
            "lo": float(f["radiometer"].attrs["lo_freq_ghz"]),
            "if_ghz": f["radiometer/channels/if_centre_ghz"][()],
            "bw_ghz": f["radiometer/channels/bandwidth_ghz"][()],
            "time_s": f["radiometer/time_s"][()],
            "tb": f["radiometer/brightness_k"][()],
            "valid": f["radiometer/valid"][()].astype(bool),
            "az": f["pointing/azimuth_deg"][()],
            "el": f["pointing/elevation_deg"][()],
            "scan_start": f["scans/start_s"][()],
            "scan_stop": f["scans/stop_s"][()],
            "intent": list(f["scans/intent"].asstr()[()]),
            "source": list(f["scans/source"].asstr()[()]),
            "obs_freq": f["scans/obs_freq_ghz"][()],
            "w_time": f["weather/time_s"][()],
            "w_t": f["weather/temperature_k"][()],
            "w_p": f["weather/pressure_hpa"][()],
            "w_h": f["weather/relative_humidity_pct"][()],
            "cp_time": f["calibrator_phases/time_s"][()],
            "cp_pair": f["calibrator_phases/antenna_pair"][()],
            "cp_phase": f["calibrator_phases/phase_rad"][()],
            "cp_freq": f["calibrator_phases/freq_ghz"][()],
        }
    return n


def _subtable(ms, name, rows):
    t = ct.table(f"{ms}/{name}", readonly=False, ack=False)
    t.addrows(rows)
    return t


def _pointing_table(ms):
    """Replaces the default POINTING subtable by one whose columns all live in a
    StandardStMan. The default keeps them in an IncrementalStMan, which (measured with
    python-casacore 3.5.2 on casacore 3.5.0) costs time quadratic in the rows when every row's
    direction differs: 40,000 rows took 24 s, a 40-antenna 2-hour night's 288,000 rows
    more than 10 minutes; here 0.4 s."""
    shutil.rmtree(f"{ms}/POINTING")
    columns = ["ANTENNA_ID", "TIME", "INTERVAL", "NAME", "NUM_POLY", "TIME_ORIGIN",
               "DIRECTION", "TARGET", "TRACKING"]
    dminfo = {"*1": {"TYPE": "StandardStMan", "NAME": "SSMPointing",
                     "SPEC": {"BUCKETSIZE": 1 << 20}, "COLUMNS": columns}}
    table = ct.default_ms_subtable("POINTING", f"{ms}/POINTING", dminfo=dminfo)
    main = ct.table(ms, readonly=False, ack=False)
    main.putkeyword("POINTING", f"Table: {ms}/POINTING")
    main.close()
    return table


def write_ms(night_path, ms, *, clock_offset_s=0.0, pointing="azel", weather=True,
             drop_autocorrelations=(), flag_radiometer_rows=(), radiometer_window=True,
             extra_science_windows=(), science_channel_offsets_ghz=(0.0,), float_data=False,
             target_rows=True, duration_s=None):
    """Writes `ms` from the night file. Options make the awkward archives of the tests:
    clock_offset_s adds to the radiometer rows' TIME; pointing "azel" stores the night's
    azimuth/elevation in POINTING, "none" leaves POINTING empty (FIELD directions only);
    drop_autocorrelations lists antenna indices without radiometer rows; flag_radiometer_rows
    lists (antenna, time index) samples written with FLAG_ROW; extra_science_windows adds
    spectral windows (frequencies in GHz) with calibrator rows of their own;
    science_channel_offsets_ghz places each science window's channels at its frequency plus
    these offsets (visibilities equal in every channel); float_data True writes every row's
    real part to FLOAT_DATA (no DATA column), "radiometer" the radiometer rows to FLOAT_DATA
    and the others to DATA, "science" the other way round; duration_s keeps only the main-table rows of the night's first
    duration_s seconds."""
    n = read_night(night_path)
    na, nt = len(n["names"]), len(n["time_s"])
    nc = len(n["if_ghz"])
    epoch = mjd_seconds(n["epoch"])
    ct.default_ms(ms).close()

    t = ct.table(f"{ms}/ANTENNA", readonly=False, ack=False)
    t.addrows(na)
    t.putcol("NAME", n["names"])
    t.putcol("STATION", [f"pad-{i}" for i in range(na)])
    t.putcol("POSITION", itrf_from_enu(n["enu"], n["lat"], n["lon"], n["height"]))
    t.putcol("DISH_DIAMETER", np.full(na, 12.0))
    t.close()

    science_freqs = [float(n["obs_freq"][0])] + [float(f) for f in extra_science_windows]
    offsets = np.asarray(science_channel_offsets_ghz, dtype=float)
    nchan = len(offsets)
    windows = [(f"science-{i}", (f + offsets) * 1e9, np.full(nchan, 0.05e9))
               for i, f in enumerate(science_freqs)]
    if radiometer_window:
        windows.append(("radiometer", (n["lo"] + n["if_ghz"]) * 1e9, n["bw_ghz"] * 1e9))
    t = ct.table(f"{ms}/SPECTRAL_WINDOW", readonly=False, ack=False)
    t.addrows(len(windows))
    for i, (name, freq, width) in enumerate(windows):
        t.putcell("NAME", i, name)
        t.putcell("NUM_CHAN", i, len(freq))
        t.putcell("CHAN_FREQ", i, freq)
        t.putcell("CHAN_WIDTH", i, width)
        t.putcell("EFFECTIVE_BW", i, width)
        t.putcell("RESOLUTION", i, width)
        t.putcell("REF_FREQUENCY", i, float(freq[0]))
        t.putcell("TOTAL_BANDWIDTH", i, float(np.sum(width)))
    t.close()

    t = ct.table(f"{ms}/POLARIZATION", readonly=False, ack=False)
    t.addrows(2)
    t.putcell("NUM_CORR", 0, 2)
    t.putcell("CORR_TYPE", 0, np.array([9, 12], dtype=np.int32))  # XX, YY (casacore Stokes)
    t.putcell("CORR_PRODUCT", 0, np.array([[0, 0], [1, 1]], dtype=np.int32))
    t.putcell("NUM_CORR", 1, 1)
    t.putcell("CORR_TYPE", 1, np.array([9], dtype=np.int32))
    t.putcell("CORR_PRODUCT", 1, np.array([[0, 0]], dtype=np.int32))
    t.close()

    t = ct.table(f"{ms}/DATA_DESCRIPTION", readonly=False, ack=False)
    t.addrows(len(windows))
    t.putcol("SPECTRAL_WINDOW_ID", np.arange(len(windows), dtype=np.int32))
    t.putcol("POLARIZATION_ID",
             np.array([0] * len(science_freqs) + [1] * (len(windows) - len(science_freqs)),
                      dtype=np.int32))
    t.close()
    radiometer_dd = len(science_freqs)

    sources = sorted(set(n["source"]))
    t = ct.table(f"{ms}/FIELD", readonly=False, ack=False)
    t.addrows(len(sources))
    t.putcol("NAME", sources)
    for i, _ in enumerate(sources):
        direction = np.array([[0.6 + 0.8 * i, -0.61 + 0.05 * i]])  # J2000 RA, Dec (rad)
        for column in ("PHASE_DIR", "DELAY_DIR", "REFERENCE_DIR"):
            t.putcell(column, i, direction)
    t.close()

    t = ct.table(f"{ms}/STATE", readonly=False, ack=False)
    t.addrows(2)
    t.putcol("OBS_MODE", ["CALIBRATE_PHASE#ON_SOURCE", "OBSERVE_TARGET#ON_SOURCE"])
    t.close()

    # Scan of each radiometer time (index) for SCAN_NUMBER / FIELD_ID / STATE_ID.
    def scan_of(time_s):
        i = np.searchsorted(n["scan_stop"], time_s, side="right")
        return np.minimum(i, len(n["scan_start"]) - 1)

    # (time, a1, a2, dd, scan index, data, flag_row); python-casacore shapes cells in reverse
    # of casacore's, so data is [channel, correlation] here.
    rows = []
    scan_of_t = scan_of(n["time_s"])
    for a in range(na):
        if a in drop_autocorrelations or not radiometer_window:
            continue
        for k in range(nt):
            tb = n["tb"][a, k]
            flagged = (not n["valid"][a, k]) or (a, k) in flag_radiometer_rows
            rows.append((n["time_s"][k] + clock_offset_s, a, a, radiometer_dd, scan_of_t[k],
                         np.where(np.isfinite(tb), tb, 0.0)[:, None].astype(np.complex64), flagged))
    scan_rows = scan_of(n["cp_time"])
    for r in range(len(n["cp_time"])):
        a, b = n["cp_pair"][r]
        v = np.exp(1j * n["cp_phase"][r])
        for w in range(len(science_freqs)):
            rows.append((n["cp_time"][r], a, b, w, scan_rows[r],
                         np.full((nchan, 2), v, dtype=np.complex64), False))
    if target_rows:
        for s, intent in enumerate(n["intent"]):
            if intent != "target":
                continue
            for time_s in n["time_s"][(n["time_s"] >= n["scan_start"][s]) & (n["time_s"] < n["scan_stop"][s])]:
                rows.append((time_s, 0, 1, 0, s, np.ones((nchan, 2), dtype=np.complex64), False))

    if duration_s is not None:
        rows = [r for r in rows if r[0] - clock_offset_s * (r[1] == r[2]) < n["time_s"][0] + duration_s]
    main = ct.table(ms, readonly=False, ack=False)
    if float_data:
        main.addcols(ct.maketabdesc(ct.makearrcoldesc("FLOAT_DATA", 0.0, ndim=2, valuetype="float")))
    if float_data is not True:  # False, "radiometer" or "science": DATA too
        main.addcols(ct.maketabdesc(ct.makearrcoldesc("DATA", 0j, ndim=2, valuetype="complex")))
    main.addrows(len(rows))
    field_index = {s: i for i, s in enumerate(sources)}
    main.putcol("TIME", np.array([epoch + r[0] for r in rows]))
    main.putcol("TIME_CENTROID", np.array([epoch + r[0] for r in rows]))
    main.putcol("INTERVAL", np.ones(len(rows)))
    main.putcol("EXPOSURE", np.ones(len(rows)))
    main.putcol("ANTENNA1", np.array([r[1] for r in rows], dtype=np.int32))
    main.putcol("ANTENNA2", np.array([r[2] for r in rows], dtype=np.int32))
    main.putcol("DATA_DESC_ID", np.array([r[3] for r in rows], dtype=np.int32))
    main.putcol("SCAN_NUMBER", np.array([r[4] + 1 for r in rows], dtype=np.int32))
    main.putcol("FIELD_ID", np.array([field_index[n["source"][r[4]]] for r in rows], dtype=np.int32))
    main.putcol("STATE_ID", np.array([0 if n["intent"][r[4]] == "calibrator" else 1 for r in rows],
                                     dtype=np.int32))
    main.putcol("FLAG_ROW", np.array([r[6] for r in rows]))
    def data_column(row):
        radiometer_row = row[3] == radiometer_dd
        in_float = (float_data is True or (float_data == "radiometer" and radiometer_row)
                    or (float_data == "science" and not radiometer_row))
        return "FLOAT_DATA" if in_float else "DATA"

    start = 0
    while start < len(rows):  # blocks of rows with one cell shape and column, written at once
        stop = start
        while (stop < len(rows) and rows[stop][5].shape == rows[start][5].shape
               and data_column(rows[stop]) == data_column(rows[start])):
            stop += 1
        block = np.stack([r[5] for r in rows[start:stop]])
        if data_column(rows[start]) == "FLOAT_DATA":
            block = block.real.astype(np.float32)
        main.putcol(data_column(rows[start]), block, startrow=start, nrow=stop - start)
        main.putcol("FLAG", np.zeros(block.shape, dtype=bool), startrow=start, nrow=stop - start)
        weights = np.ones((stop - start, block.shape[2]), dtype=np.float32)
        main.putcol("WEIGHT", weights, startrow=start, nrow=stop - start)
        main.putcol("SIGMA", weights, startrow=start, nrow=stop - start)
        start = stop
    main.close()

    if pointing == "azel":
        kept = np.ones(nt, dtype=bool) if duration_s is None else n["time_s"] < n["time_s"][0] + duration_s
        nk = int(np.count_nonzero(kept))
        p = _pointing_table(ms)
        p.putcolkeyword("DIRECTION", "MEASINFO", {"type": "direction", "Ref": "AZEL"})
        p.addrows(na * nk)
        p.putcol("ANTENNA_ID", np.repeat(np.arange(na, dtype=np.int32), nk))
        p.putcol("TIME", np.tile(epoch + n["time_s"][kept], na))
        p.putcol("INTERVAL", np.ones(na * nk))
        p.putcol("NUM_POLY", np.zeros(na * nk, dtype=np.int32))
        direction = np.radians(np.stack([n["az"][:, kept].ravel(), n["el"][:, kept].ravel()],
                                        axis=1))[:, None, :]
        p.putcol("DIRECTION", direction)
        p.putcol("TARGET", direction)
        p.close()

    if weather and len(n["w_time"]):
        desc = ct.maketabdesc([
            ct.makescacoldesc("ANTENNA_ID", 0), ct.makescacoldesc("INTERVAL", 0.0),
            ct.makescacoldesc("TIME", 0.0),
            ct.makescacoldesc("TEMPERATURE", 0.0, keywords={"QuantumUnits": ["K"]}),
            ct.makescacoldesc("PRESSURE", 0.0, keywords={"QuantumUnits": ["hPa"]}),
            ct.makescacoldesc("REL_HUMIDITY", 0.0, keywords={"QuantumUnits": ["%"]}),
        ])
        w = ct.table(f"{ms}/WEATHER", desc, nrow=0, readonly=False, ack=False)
        nw = len(n["w_time"])
        w.addrows(2 * nw)  # two stations, +/- offsets that average out
        w.putcol("ANTENNA_ID", np.repeat(np.array([0, 1], dtype=np.int32), nw))
        w.putcol("TIME", np.tile(epoch + n["w_time"], 2))
        w.putcol("INTERVAL", np.full(2 * nw, 60.0))
        w.putcol("TEMPERATURE", np.concatenate([n["w_t"] - 0.5, n["w_t"] + 0.5]))
        w.putcol("PRESSURE", np.concatenate([n["w_p"] - 1.0, n["w_p"] + 1.0]))
        w.putcol("REL_HUMIDITY", np.concatenate([n["w_h"] - 2.0, n["w_h"] + 2.0]))
        w.close()
        main = ct.table(ms, readonly=False, ack=False)
        main.putkeyword("WEATHER", f"Table: {ms}/WEATHER")
        main.close()


if __name__ == "__main__":
    # ms_writer.py NIGHT.h5 OUT.ms [DURATION_S]
    write_ms(sys.argv[1], sys.argv[2], duration_s=float(sys.argv[3]) if len(sys.argv) > 3 else None)
