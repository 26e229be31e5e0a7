"""Sample logger for the Residuum demo workspace (an invented example, not a real product).

Writes the wide CSV that the demo log (demo/warehouse-flight.csv) follows: one row per filter epoch at
100 Hz with the state, its 1-sigma values and ground truth; the TDOA and magnetometer updates and the raw
TDOA and IMU samples share the row of their epoch, and their cells stay empty when nothing happened.
Units are SI (m, m/s, rad, rad/s, m/s^2); navigation frame ENU; quaternions are Hamilton, scalar first,
rotating body vectors into the navigation frame.
"""

import csv

STATE_COLUMNS = [
    "t",
    "p_x", "p_y", "p_z",
    "v_x", "v_y", "v_z",
    "q_w", "q_x", "q_y", "q_z",
    "bg_x", "bg_y", "bg_z",
    "ba_x", "ba_y", "ba_z",
    "sigma_p_x", "sigma_p_y", "sigma_p_z",
    "sigma_v_x", "sigma_v_y", "sigma_v_z",
    "sigma_att_x", "sigma_att_y", "sigma_att_z",
    "sigma_bg_x", "sigma_bg_y", "sigma_bg_z",
    "sigma_ba_x", "sigma_ba_y", "sigma_ba_z",
]

TRUTH_COLUMNS = [
    "gt_p_x", "gt_p_y", "gt_p_z",
    "gt_v_x", "gt_v_y", "gt_v_z",
    "gt_q_w", "gt_q_x", "gt_q_y", "gt_q_z",
]

TDOA_COLUMNS = ["nu_tdoa", "s_tdoa", "id_tdoa", "rejected_tdoa"]

MAG_COLUMNS = [
    "nu_mag_0", "nu_mag_1", "nu_mag_2",
    "s_mag_0_0", "s_mag_0_1", "s_mag_0_2", "s_mag_1_1", "s_mag_1_2", "s_mag_2_2",
]

RAW_COLUMNS = ["tdoa_i", "tdoa_j", "tdoa", "gyro_x", "gyro_y", "gyro_z", "acc_x", "acc_y", "acc_z"]

HEADER = STATE_COLUMNS + TRUTH_COLUMNS + TDOA_COLUMNS + MAG_COLUMNS + RAW_COLUMNS


class FlightLogger:
    """Collects one row per epoch and writes it when the next epoch starts."""

    def __init__(self, path, anchors, source="src/filter/tdoa_update.cpp:120"):
        self._file = open(path, "w", newline="")
        self._file.write("# frame: ENU\n")
        self._file.write(f"# source: {source}\n")
        for anchor_id, (x, y, z) in sorted(anchors.items()):
            self._file.write(f"# anchor {anchor_id}: {x:.2f} {y:.2f} {z:.2f}\n")
        self._writer = csv.DictWriter(self._file, fieldnames=HEADER, restval="")
        self._writer.writeheader()
        self._row = None

    def _start(self, t_s):
        if self._row is not None and self._row["t"] != f"{t_s:.2f}":
            self._writer.writerow(self._row)
            self._row = None
        if self._row is None:
            self._row = {"t": f"{t_s:.2f}"}
        return self._row

    def state(self, t_s, x, sigma, truth=None):
        row = self._start(t_s)
        for i, axis in enumerate("xyz"):
            row[f"p_{axis}"] = f"{x.p[i]:.3f}"
            row[f"v_{axis}"] = f"{x.v[i]:.3f}"
            row[f"bg_{axis}"] = f"{x.bg[i]:.5f}"
            row[f"ba_{axis}"] = f"{x.ba[i]:.4f}"
            row[f"sigma_p_{axis}"] = f"{sigma.p[i]:.3f}"
            row[f"sigma_v_{axis}"] = f"{sigma.v[i]:.3f}"
            row[f"sigma_att_{axis}"] = f"{sigma.att[i]:.4f}"
            row[f"sigma_bg_{axis}"] = f"{sigma.bg[i]:.5f}"
            row[f"sigma_ba_{axis}"] = f"{sigma.ba[i]:.3f}"
        for i, part in enumerate("wxyz"):
            row[f"q_{part}"] = f"{x.q[i]:.4f}"
        if truth is not None:
            for i, axis in enumerate("xyz"):
                row[f"gt_p_{axis}"] = f"{truth.p[i]:.3f}"
                row[f"gt_v_{axis}"] = f"{truth.v[i]:.3f}"
            for i, part in enumerate("wxyz"):
                row[f"gt_q_{part}"] = f"{truth.q[i]:.4f}"

    def tdoa_update(self, t_s, anchor_i, anchor_j, d_m, nu_m, s_m2, rejected):
        row = self._start(t_s)
        row["nu_tdoa"] = f"{nu_m:.4f}"
        row["s_tdoa"] = f"{s_m2:.6f}"
        row["id_tdoa"] = f"{anchor_i}-{anchor_j}"
        row["rejected_tdoa"] = "1" if rejected else "0"
        row["tdoa_i"] = str(anchor_i)
        row["tdoa_j"] = str(anchor_j)
        row["tdoa"] = f"{d_m:.4f}"

    def mag_update(self, t_s, nu_ut, s_ut2):
        row = self._start(t_s)
        for i in range(3):
            row[f"nu_mag_{i}"] = f"{nu_ut[i]:.3f}"
        for i in range(3):
            for j in range(i, 3):
                row[f"s_mag_{i}_{j}"] = f"{s_ut2[i][j]:.4f}"

    def imu(self, t_s, gyro_rad_s, acc_m_s2):
        row = self._start(t_s)
        for i, axis in enumerate("xyz"):
            row[f"gyro_{axis}"] = f"{gyro_rad_s[i]:.4f}"
            row[f"acc_{axis}"] = f"{acc_m_s2[i]:.3f}"

    def close(self):
        if self._row is not None:
            self._writer.writerow(self._row)
        self._file.close()
