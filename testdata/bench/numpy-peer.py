#!/usr/bin/env python3
"""A hand-written numpy renderer of the benchmark patches, for `make bench`.

Given the name of a patch it renders the same files sinter renders from it:
  bench-pad   testdata/bench-pad.yaml: 12 keys from C2 to A4 in steps of 3
              semitones, velocity layers 80 and 120, 2 round robins with
              random phases, 4 s (note-off at 3 s)
  dense-pad   testdata/bench/dense-pad.yaml: 37 keys from C2 to C5, velocity
              100, one round robin, 6 s (note-off at 5 s)
-- at 48 kHz, harmonics 1..200 of the 12-TET fundamental at amplitude
(velocity/127)/n, dropped at 0.45 fs and faded by a raised cosine over the
10 % below it, each with the patch's ADSR for its n, one peak gain for the
set to -1 dBFS, TPDF dither and 24-bit PCM WAV -- so `make bench` can time
both side by side. It is written the fastest way found for numpy: blocks
of 1024 samples, the phase of every partial as one outer product per block,
each partial's envelope taken at the block edges and ramped across the block
by another outer product, and the partials summed down the matrix.
Everything stays in memory, as a numpy script would do it. Keep it in step
with the patch.

usage: numpy-peer.py PATCH OUTPUT_DIR
"""
import os
import sys
import wave

import numpy as np

RATE = 48000
# name: (keys, velocities, round robins, seconds, note-off in seconds)
PATCHES = {
    'bench-pad': (range(36, 72, 3), (80, 120), 2, 4, 3),  # C2 .. A4
    'dense-pad': (range(36, 73), (100,), 1, 6, 5),  # C2 .. C5
}
HARMONICS = 200
LIMIT = 0.45 * RATE
FADE_FROM = LIMIT * 0.9
SUSTAIN = 0.6
BLOCK = 1024
DEPTH = np.log(1000.0)
FLOOR = np.exp(-DEPTH)


def curve(u):
    return (np.exp(-DEPTH * u) - FLOOR) / (1 - FLOOR)


def envelope(t, attack, decay, release, hold):
    """Each partial's ADSR (one row per partial) at sample positions t."""
    t = t[None, :]
    attack, decay, release = attack[:, None], decay[:, None], release[:, None]
    held = np.where(
        t < attack,
        t / attack,
        np.where(t < attack + decay,
                 SUSTAIN + (1 - SUSTAIN) * curve(np.clip((t - attack) / decay, 0, 1)),
                 SUSTAIN))
    # Every attack and decay is over before the note-off, so the release
    # starts from the sustain level.
    rel = SUSTAIN * curve(np.clip((t - hold) / release, 0, 1))
    return np.where(t < hold, held, np.where(t < hold + release, rel, 0.0))


def render(key, velocity, frames, hold, rng):
    f0 = 440.0 * 2 ** ((key - 69) / 12)
    n = np.arange(1, HARMONICS + 1)
    hz = f0 * n
    keep = hz < LIMIT
    n, hz = n[keep], hz[keep]
    fade = np.where(hz > FADE_FROM, 0.5 + 0.5 * np.cos(np.pi * (hz - FADE_FROM) / (LIMIT - FADE_FROM)), 1.0)
    amp = velocity / 127 / n * fade
    attack, decay, release = (0.05 + 0.2 / n) * RATE, (0.2 + 1.5 / n) * RATE, (0.3 + 0.8 / n) * RATE
    phase = rng.uniform(0, 2 * np.pi, len(hz))
    w = 2 * np.pi * hz / RATE
    j = np.arange(BLOCK)
    ramp = j / BLOCK
    out = np.empty(frames)
    for b0 in range(0, frames, BLOCK):
        m = min(BLOCK, frames - b0)
        edges = envelope(np.array([b0, b0 + BLOCK], dtype=float), attack, decay, release, hold) * amp[:, None]
        gain = edges[:, :1] + (edges[:, 1:] - edges[:, :1]) * ramp[None, :m]
        theta = np.outer(w, j[:m] + b0)
        theta += phase[:, None]
        np.sin(theta, out=theta)
        theta *= gain
        out[b0:b0 + m] = theta.sum(axis=0)
    return out


def write24(path, x, rng):
    lsb = 2.0 ** 23
    dither = rng.random(len(x)) - rng.random(len(x))
    q = np.clip(np.round(x * (lsb - 1) + dither), -lsb, lsb - 1).astype('<i4')
    packed = q.view(np.uint8).reshape(-1, 4)[:, :3].tobytes()
    with wave.open(path, 'wb') as f:
        f.setnchannels(1)
        f.setsampwidth(3)
        f.setframerate(RATE)
        f.writeframes(packed)


def main():
    name, out_dir = sys.argv[1], sys.argv[2]
    keys, velocities, round_robins, seconds, note_off = PATCHES[name]
    os.makedirs(out_dir, exist_ok=True)
    rng = np.random.default_rng(1)
    notes = []
    for key in keys:
        for vel in velocities:
            for rr in range(round_robins):
                x = render(key, vel, seconds * RATE, note_off * RATE, rng)
                notes.append((f"{name}_{key}_v{vel}_rr{rr + 1}.wav", x))
    peak = max(np.abs(x).max() for _, x in notes)
    gain = 10 ** (-1 / 20) / peak
    for name, x in notes:
        write24(os.path.join(out_dir, name), x * gain, rng)


if __name__ == '__main__':
    main()
