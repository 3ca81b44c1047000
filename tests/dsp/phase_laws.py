"""Exact speed laws for the order-tracking and TSA tests (analytic truth, no tach detection)."""

import numpy as np


class WanderProfile:
    """Exact speed profile of the tach shaft: f0 * (1 + dev * sin(2 pi fm t)), angle 0 at t = 0."""

    def __init__(self, f0, dev, fm, duration_s):
        self.f0, self.dev, self.fm = f0, dev, fm
        self.shaft, self.source = "input", "tach"
        self.t_start_s, self.t_end_s = 0.0, duration_s
        self.mean_hz, self.min_hz, self.max_hz = f0, f0 * (1 - dev), f0 * (1 + dev)
        self.n_revs = int(self.angle_rev(duration_s))

    def angle_rev(self, t_s):
        t = np.asarray(t_s, dtype=float)
        w = 2 * np.pi * self.fm
        return self.f0 * t + self.f0 * self.dev * (1 - np.cos(w * t)) / w

    def speed_hz(self, t_s):
        return self.f0 * (1 + self.dev * np.sin(2 * np.pi * self.fm * np.asarray(t_s, dtype=float)))

    def time_s(self, angle_rev):
        a = np.asarray(angle_rev, dtype=float)
        t = a / self.f0
        for _ in range(40):
            t = t - (self.angle_rev(t) - a) / self.speed_hz(t)
        return t
