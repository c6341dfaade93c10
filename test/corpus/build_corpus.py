#!/usr/bin/env python3
"""
Builds Reelwright's real-material corpus: clean clips rendered from real recordings that Debian's
package archive carries, and impaired copies with known faults applied exactly with numpy/scipy.

    python3 test/corpus/build_corpus.py --out .cache/corpus [--fast] [--jobs 2]

Clean material (nothing added; every sound is a recorded sample):
  - Fluid R3 GM soundfont (fluid-soundfont-gm) rendered by fluidsynth with reverb and chorus off,
    from MIDI files this script writes: low piano and organ notes, basses, guitars, strings, brass,
    choir, pads, bells, sound effects, a GM drum kit;
  - Hydrogen drum kits (hydrogen-drumkits): kick, snare, toms, hats, cymbals placed on a grid;
  - Festival diphone voices kal and ked (festvox-kallpc16k, festvox-kdlpc16k), recorded diphones
    concatenated into sentences of our own;
  - held out from tuning ("holdout" split): the TimGM6mb soundfont (timgm6mb-soundfont), the
    Asterisk English prompts (asterisk-core-sounds-en-wav, recorded speech, 8 kHz), Hydrogen kits
    not used in the development split, and the ked voice.
Impairments (applied here, recorded as truth in manifest.json): speed changes (scipy.signal.
resample_poly with an exact rational factor), mains hum and line-up tones added before the speed
change (so they move with it), drift and flutter (band-limited interpolation on a known time map),
reflections and print-through (exact fractional delays by the DFT shift theorem), reversed
channels, inter-channel delays, dropouts (exact digital zeros and level dips), clipping, low-pass.

Every clip is a WAV file; manifest.json lists each with its truth and the package versions used.
The build is incremental: a clip whose recipe is unchanged and whose file exists is kept.
"""
from __future__ import annotations

import argparse
import hashlib
import json
import math
import os
import shutil
import struct
import subprocess
import sys
import tempfile
import warnings
import wave
from concurrent.futures import ProcessPoolExecutor
from fractions import Fraction

import numpy as np
import scipy
import scipy.io.wavfile
import scipy.signal

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), '..', 'helpers'))
from audio_files import vlq, write_pcm_wav  # noqa: E402

CORPUS_VERSION = 2
warnings.filterwarnings('ignore', category=scipy.io.wavfile.WavFileWarning)
FLUID = '/usr/share/sounds/sf2/FluidR3_GM.sf2'
TIMGM = '/usr/share/sounds/sf2/TimGM6mb.sf2'
HYDROGEN = '/usr/share/hydrogen/data/drumkits'
ASTERISK = '/usr/share/asterisk/sounds/en_US_f_Allison'
PACKAGES = ['fluidsynth', 'fluid-soundfont-gm', 'timgm6mb-soundfont', 'hydrogen-drumkits', 'flac', 'festival',
            'festvox-kallpc16k', 'festvox-kdlpc16k', 'asterisk-core-sounds-en-wav']

# ---------------------------------------------------------------------------------------------
# Small pieces: MIDI files, WAV files, levels
# ---------------------------------------------------------------------------------------------

def write_midi(path: str, notes: list, programs: dict, pans: dict | None = None, end_seconds: float | None = None) -> None:
    """Standard MIDI file, format 0, 960 ticks per second (480 per quarter at 120 bpm).
    notes: (start_s, dur_s, channel, key, velocity); programs: channel -> GM program."""
    tps = 960
    events = []  # (tick, order, bytes)
    for ch, prog in programs.items():
        if ch != 9:
            events.append((0, 0, bytes([0xC0 | ch, prog])))
        events.append((0, 0, bytes([0xB0 | ch, 7, 100])))  # channel volume
        pan = (pans or {}).get(ch, 64)
        events.append((0, 0, bytes([0xB0 | ch, 10, pan])))
        events.append((0, 0, bytes([0xB0 | ch, 91, 0])))  # reverb send 0
        events.append((0, 0, bytes([0xB0 | ch, 93, 0])))  # chorus send 0
    last = 0
    for start, dur, ch, key, vel in notes:
        t0 = int(round(start * tps))
        t1 = int(round((start + dur) * tps))
        events.append((t0, 2, bytes([0x90 | ch, key, vel])))
        events.append((t1, 1, bytes([0x80 | ch, key, 0])))
        last = max(last, t1)
    if end_seconds is not None:
        last = max(last, int(round(end_seconds * tps)))
    events.sort(key=lambda e: (e[0], e[1]))
    track = bytearray(vlq(0) + b'\xff\x51\x03' + (500000).to_bytes(3, 'big'))  # 120 bpm
    t = 0
    for tick, _, data in events:
        track += vlq(tick - t) + data
        t = tick
    track += vlq(last - t) + b'\xff\x2f\x00'
    with open(path, 'wb') as f:
        f.write(b'MThd' + struct.pack('>IHHH', 6, 0, 1, 480))
        f.write(b'MTrk' + struct.pack('>I', len(track)) + bytes(track))


def read_wav(path: str) -> tuple[int, np.ndarray]:
    """(rate, float64 array frames × channels), full scale ±1."""
    rate, data = scipy.io.wavfile.read(path)
    if data.dtype == np.int16:
        x = data.astype(np.float64) / 32768.0
    elif data.dtype == np.int32:
        x = data.astype(np.float64) / 2147483648.0
    elif data.dtype == np.uint8:
        x = (data.astype(np.float64) - 128.0) / 128.0
    else:
        x = data.astype(np.float64)
    if x.ndim == 1:
        x = x[:, None]
    return int(rate), x


def write_wav(path: str, rate: int, x: np.ndarray, bits: int) -> None:
    """PCM 16/24-bit through Python's wave module, or 32-bit float through scipy.io.wavfile."""
    x = np.asarray(x, dtype=np.float64)
    if x.ndim == 1:
        x = x[:, None]
    tmp = path + '.part'
    if bits == 32:
        scipy.io.wavfile.write(tmp, rate, x.astype(np.float32))
    else:
        scale = 2 ** (bits - 1)
        q = np.clip(np.round(x * scale), -scale, scale - 1).astype(np.int64)
        write_pcm_wav(tmp, q, rate, bits)
    os.replace(tmp, path)


def db(v: float) -> float:
    return 20 * math.log10(max(v, 1e-300))


def rms(x: np.ndarray) -> float:
    return float(np.sqrt(np.mean(x ** 2))) if x.size else 0.0


def normalise(x: np.ndarray, rms_dbfs: float, peak_limit_dbfs: float = -1.0) -> np.ndarray:
    """Scale to an RMS level (measured over the sounding part), keeping the peak under the limit."""
    loud = np.abs(x).max(axis=1) > 1e-4
    r = rms(x[loud]) if loud.any() else rms(x)
    if r == 0:
        return x
    g = 10 ** (rms_dbfs / 20) / r
    peak = np.abs(x).max() * g
    lim = 10 ** (peak_limit_dbfs / 20)
    if peak > lim:
        g *= lim / peak
    return x * g


def trim_tail(x: np.ndarray, rate: int, keep_seconds: float = 0.3, floor_db: float = -90.0) -> np.ndarray:
    a = np.abs(x).max(axis=1)
    idx = np.nonzero(a > 10 ** (floor_db / 20))[0]
    if idx.size == 0:
        return x
    end = min(x.shape[0], idx[-1] + int(keep_seconds * rate))
    return x[:end]


_resamplers: dict = {}


def resample_to(x: np.ndarray, from_rate: int, to_rate: int) -> np.ndarray:
    """Rate change by scipy.signal.resample_poly with a Kaiser-window FIR (140 dB) whose
    transition band is 5 % of the lower Nyquist frequency, so the content stops where it stopped."""
    if from_rate == to_rate:
        return x
    fr = Fraction(to_rate, from_rate)
    up, down = fr.numerator, fr.denominator
    key_ = (up, down)
    if key_ not in _resamplers:
        m = max(up, down)
        numtaps, beta = scipy.signal.kaiserord(140, 0.05 / m)
        numtaps |= 1
        _resamplers[key_] = up * scipy.signal.firwin(numtaps, 0.975 / m, window=('kaiser', beta))
    return scipy.signal.resample_poly(x, up, down, axis=0, window=_resamplers[key_])


# ---------------------------------------------------------------------------------------------
# Clean sources
# ---------------------------------------------------------------------------------------------

def render_fluid(spec: dict, rate: int, tmp: str) -> np.ndarray:
    mid = os.path.join(tmp, 'song.mid')
    out = os.path.join(tmp, 'song.wav')
    write_midi(mid, [tuple(n) for n in spec['notes']], {int(k): v for k, v in spec['programs'].items()},
               {int(k): v for k, v in spec.get('pans', {}).items()}, spec.get('end'))
    sf = TIMGM if spec.get('soundfont') == 'timgm' else FLUID
    subprocess.run(['fluidsynth', '-ni', '-q', '-R', '0', '-C', '0', '-g', str(spec.get('gain', 0.5)), '-r', str(rate),
                    '-O', 'float', '-T', 'wav', '-F', out, sf, mid], check=True, stdout=subprocess.DEVNULL,
                   stderr=subprocess.DEVNULL)
    r, x = read_wav(out)
    assert r == rate, (r, rate)
    return trim_tail(x, rate)


_kit_cache: dict = {}


def kit_sample(path: str) -> tuple[int, np.ndarray]:
    """A kit's recorded sample: FLAC through the reference decoder, WAV through scipy, AIFF
    through Python's aifc module (big-endian PCM)."""
    if path not in _kit_cache:
        if path.endswith('.flac'):
            with tempfile.TemporaryDirectory() as d:
                out = os.path.join(d, 's.wav')
                subprocess.run(['flac', '-d', '-s', '-f', '-o', out, path], check=True)
                _kit_cache[path] = read_wav(out)
        elif path.endswith('.wav'):
            _kit_cache[path] = read_wav(path)
        else:
            import warnings
            with warnings.catch_warnings():
                warnings.simplefilter('ignore', DeprecationWarning)
                import aifc
            with aifc.open(path, 'rb') as a:
                n, w, ch, r = a.getnframes(), a.getsampwidth(), a.getnchannels(), a.getframerate()
                raw = np.frombuffer(a.readframes(n), dtype=np.uint8).reshape(-1, w)
            full = np.zeros((raw.shape[0], 4), dtype=np.uint8)
            full[:, :w] = raw  # big-endian bytes, left-aligned in 32 bits
            v = full.view('>i4')[:, 0].astype(np.float64) / 2147483648.0
            _kit_cache[path] = (int(r), v.reshape(-1, ch))
    return _kit_cache[path]


def render_hydrogen(spec: dict, rate: int) -> np.ndarray:
    """Hits on a grid: spec['hits'] = [(time_s, sample_file, gain)]; stereo when any sample is."""
    hits = spec['hits']
    loaded = [(t, kit_sample(os.path.join(HYDROGEN, spec['kit'], f)), g) for t, f, g in hits]
    chans = max(s[1].shape[1] for _, s, _ in loaded)
    length = max(int(round(t * rate)) + int(s[1].shape[0] * rate / s[0]) for t, s, _ in loaded) + rate // 4
    length = max(length, int(spec.get('end', 0) * rate))
    out = np.zeros((length, chans))
    for t, (r, s), g in loaded:
        s = resample_to(s, r, rate)
        if s.shape[1] < chans:
            s = np.repeat(s, chans, axis=1)
        i = int(round(t * rate))
        n = min(s.shape[0], length - i)
        out[i:i + n] += g * s[:n]
    return out


def render_festival(spec: dict, rate: int, tmp: str) -> np.ndarray:
    pieces = []
    for i, sentence in enumerate(spec['sentences']):
        txt = os.path.join(tmp, f's{i}.txt')
        wav_path = os.path.join(tmp, f's{i}.wav')
        with open(txt, 'w') as f:
            f.write(sentence + '\n')
        subprocess.run(['text2wave', '-eval', f"(voice_{spec['voice']}_diphone)", '-o', wav_path, txt], check=True,
                       stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        r, x = read_wav(wav_path)
        pieces.append(x[:, :1])
        pieces.append(np.zeros((int(r * spec.get('pause', 0.6)), 1)))
    x = np.concatenate(pieces)
    return resample_to(x, r, rate)


def render_asterisk(spec: dict, rate: int) -> np.ndarray:
    pieces = []
    r = 8000
    for name in spec['prompts']:
        r, x = read_wav(os.path.join(ASTERISK, name + '.wav'))
        pieces.append(x[:, :1])
        pieces.append(np.zeros((int(r * spec.get('pause', 0.5)), 1)))
    return resample_to(np.concatenate(pieces), r, rate)


def render_clean(recipe: dict, tmp: str) -> np.ndarray:
    src = recipe['source']
    rate = recipe['sampleRateHz']
    if src['type'] == 'fluidsynth':
        x = render_fluid(src, rate, tmp)
    elif src['type'] == 'hydrogen':
        x = render_hydrogen(src, rate)
    elif src['type'] == 'festival':
        x = render_festival(src, rate, tmp)
    elif src['type'] == 'asterisk':
        x = render_asterisk(src, rate)
    else:
        raise ValueError(src['type'])
    if recipe['channels'] == 1 and x.shape[1] > 1:
        x = x.mean(axis=1, keepdims=True)
    elif recipe['channels'] == 2 and x.shape[1] == 1:
        x = np.repeat(x, 2, axis=1)
    lead = recipe.get('leadSeconds', 0.0)
    if lead:
        x = np.concatenate([np.zeros((int(lead * rate), x.shape[1])), x])
    return normalise(x, recipe.get('rmsDbfs', -20.0))


# ---------------------------------------------------------------------------------------------
# Impairments (each exact, each recorded as truth)
# ---------------------------------------------------------------------------------------------

def frac_delay(x: np.ndarray, delay_samples: float, pad: int) -> np.ndarray:
    """x delayed by a fractional number of samples (DFT shift theorem on a zero-padded copy:
    a band-limited delay, exact for the padded periodic signal), length len(x) + pad."""
    n = x.shape[0] + pad
    nfft = 1 << int(math.ceil(math.log2(n + 64)))
    X = np.fft.rfft(x, nfft, axis=0)
    k = np.arange(X.shape[0])
    ph = np.exp(-2j * np.pi * k * delay_samples / nfft)
    if nfft % 2 == 0:
        # Nyquist bin: keep the delayed signal real.
        ph[-1] = np.cos(np.pi * delay_samples)
    y = np.fft.irfft(X * ph[:, None], nfft, axis=0)
    return y[:n]


def imp_reflection(x: np.ndarray, rate: int, delaySeconds: float, gain: float) -> np.ndarray:
    d = delaySeconds * rate
    return x + gain * frac_delay(x, d, 0)


def imp_print_through(x: np.ndarray, rate: int, delaySeconds: float, levelDb: float, lowpassHz: float = 4000.0) -> np.ndarray:
    """A faint copy delayed by delaySeconds (negative: before, a pre-echo), low-passed
    (2nd-order Butterworth, zero phase) and attenuated to levelDb re the programme."""
    sos = scipy.signal.butter(2, lowpassHz / (rate / 2), output='sos')
    copy = scipy.signal.sosfiltfilt(sos, x, axis=0) * 10 ** (levelDb / 20)
    d = delaySeconds * rate
    if d >= 0:
        shifted = frac_delay(copy, d, 0)
    else:
        shifted = frac_delay(copy[::-1], -d, 0)[::-1]
    return x + shifted


def imp_hum(x: np.ndarray, rate: int, mainsHz: float, levelDbfs: float, harmonics: dict | None = None, seed: int = 0) -> np.ndarray:
    """Steady mains hum: the fundamental at levelDbfs (sine peak) plus harmonics (dB re fundamental)."""
    harmonics = harmonics or {'1': 0.0, '2': -14.0, '3': -6.0, '5': -12.0}
    rng = np.random.default_rng(seed)
    t = np.arange(x.shape[0]) / rate
    h = np.zeros(x.shape[0])
    for k, rel in harmonics.items():
        f = mainsHz * int(k)
        if f < rate / 2:
            h += 10 ** ((levelDbfs + rel) / 20) * np.sin(2 * np.pi * f * t + rng.uniform(0, 2 * np.pi))
    return x + h[:, None]


def imp_tone(x: np.ndarray, rate: int, toneHz: float, seconds: float, levelDbfs: float, gapSeconds: float = 0.7) -> np.ndarray:
    """A line-up tone at the head of the reel, then a short gap, then the programme."""
    t = np.arange(int(seconds * rate)) / rate
    ramp = np.minimum(1, np.minimum(t, t[::-1]) / 0.01)
    tone = 10 ** (levelDbfs / 20) * np.sin(2 * np.pi * toneHz * t) * ramp
    tone = np.repeat(tone[:, None], x.shape[1], axis=1)
    return np.concatenate([tone, np.zeros((int(gapSeconds * rate), x.shape[1])), x])


def imp_speed(x: np.ndarray, rate: int, factor: float) -> tuple[np.ndarray, float]:
    """Played `factor` times as fast: y(t) = x(factor·t), by resample_poly with an exact ratio."""
    fr = Fraction(factor).limit_denominator(2000)
    y = scipy.signal.resample_poly(x, fr.denominator, fr.numerator, axis=0, window=('kaiser', 14.0))
    return y, fr.numerator / fr.denominator


def warp(x: np.ndarray, positions: np.ndarray, taps: int = 64, beta: float = 10.0) -> np.ndarray:
    """y[n] = x(positions[n]) by Kaiser-windowed sinc interpolation (band-limited to 0.45 fs when
    the speed rises above 1, which the cut-off follows)."""
    out = np.zeros((positions.size, x.shape[1]))
    half = taps // 2
    xp = np.concatenate([np.zeros((half, x.shape[1])), x, np.zeros((half + 1, x.shape[1]))])
    w_norm = np.i0(beta)
    chunk = 8192
    for s in range(0, positions.size, chunk):
        p = positions[s:s + chunk]
        base = np.floor(p).astype(np.int64)
        frac = p - base
        k = np.arange(-half + 1, half + 1)
        arg = frac[:, None] - k[None, :]
        w = np.i0(beta * np.sqrt(np.clip(1 - (arg / (half + 1)) ** 2, 0, 1))) / w_norm
        h = 0.9 * np.sinc(0.9 * arg) * w
        idx = base[:, None] + k[None, :] + half
        idx = np.clip(idx, 0, xp.shape[0] - 1)
        for c in range(x.shape[1]):
            out[s:s + chunk, c] = np.sum(xp[idx, c] * h, axis=1)
    return out


def imp_speed_curve(x: np.ndarray, rate: int, times: list, factors: list) -> np.ndarray:
    """Time-varying speed: factor(t) piecewise linear through (times, factors) in output time;
    the read position advances by factor(t) input samples per output sample."""
    n_out_est = int(x.shape[0] / min(factors)) + 1
    t = np.arange(n_out_est) / rate
    f = np.interp(t, times, factors)
    pos = np.concatenate([[0.0], np.cumsum(f[:-1])])
    keep = pos < x.shape[0] - 1
    return warp(x, pos[keep])


def imp_flutter(x: np.ndarray, rate: int, depthPercent: float, rateHz: float) -> np.ndarray:
    t = np.arange(x.shape[0] + rate) / rate
    f = 1 + depthPercent / 100 * np.sin(2 * np.pi * rateHz * t)
    pos = np.concatenate([[0.0], np.cumsum(f[:-1])])
    keep = pos < x.shape[0] - 1
    return warp(x, pos[keep])


def imp_reverse(x: np.ndarray, channels: list) -> np.ndarray:
    y = x.copy()
    for c in channels:
        y[:, c] = x[::-1, c]
    return y


def imp_channel_delay(x: np.ndarray, rate: int, delaySeconds: float) -> np.ndarray:
    """Channel 2 lags channel 1 by delaySeconds (positive, the convention)."""
    y = x.copy()
    y[:, 1] = frac_delay(x[:, 1:2], delaySeconds * rate, 0)[:, 0]
    return y


def place_inside_programme(x: np.ndarray, rate: int, durations: list) -> list:
    """Start times for events that must fall inside sounding programme: each event's span and
    100 ms either side have every 10 ms frame within 25 dB of the programme's RMS level. One
    event at a time, spread over the places that qualify; an event with no place is left out."""
    hop = int(0.01 * rate)
    mono = x.mean(axis=1)
    n = mono.size // hop
    fr = np.sqrt(np.mean(mono[: n * hop].reshape(n, hop) ** 2, axis=1) + 1e-30)
    level = rms(mono[np.abs(mono) > 1e-4]) if np.any(np.abs(mono) > 1e-4) else rms(mono)
    ok = fr > level * 10 ** (-25 / 20)
    starts: list = []
    taken: list = []
    for i, d in enumerate(durations):
        span = int(math.ceil(d / 0.01)) + 20
        good = np.nonzero(np.convolve(ok.astype(np.int64), np.ones(span, dtype=np.int64), 'valid') == span)[0] + 10
        good = [f for f in good if all(abs(f - t) > span + 30 for t in taken)]
        if not good:
            continue
        f = int(good[int(len(good) * (i + 0.5) / len(durations))])
        taken.append(f)
        starts.append(round(f * hop / rate, 4))
    return starts


def imp_dropouts(x: np.ndarray, rate: int, events: list) -> tuple[np.ndarray, list]:
    """events: {startSeconds or place: 'inside', durationSeconds, depthDb (None = exact digital
    zeros)}. Returns the audio and the events with their start times."""
    events = [dict(e) for e in events]
    auto = [e for e in events if e.get('startSeconds') is None]
    if auto:
        starts = place_inside_programme(x, rate, [e['durationSeconds'] for e in auto])
        for e, t in zip(auto, starts):
            e['startSeconds'] = t
            e.pop('place', None)
        events = [e for e in events if e.get('startSeconds') is not None]
    y = x.copy()
    for e in events:
        i0 = int(round(e['startSeconds'] * rate))
        n = int(round(e['durationSeconds'] * rate))
        if e.get('depthDb') is None:
            y[i0:i0 + n] = 0.0
        else:
            ramp = max(1, int(0.001 * rate))
            g = np.ones(n + 2 * ramp)
            g[ramp:ramp + n] = 10 ** (e['depthDb'] / 20)
            g[:ramp] = np.linspace(1, g[ramp], ramp)
            g[-ramp:] = np.linspace(g[ramp], 1, ramp)
            a = max(0, i0 - ramp)
            y[a:a + g.size] *= g[: y.shape[0] - a, None]
    return y, events


def imp_clip(x: np.ndarray, overDb: float) -> np.ndarray:
    g = 10 ** (overDb / 20) / np.abs(x).max()
    return np.clip(x * g, -1.0, 1.0 - 2 ** -23)


def imp_lowpass(x: np.ndarray, rate: int, cutoffHz: float) -> np.ndarray:
    """Linear-phase FIR (scipy.signal.firwin, Kaiser window, 120 dB stopband from the cut-off,
    transition band the 2 % below it), zero delay."""
    numtaps, beta = scipy.signal.kaiserord(120, 0.02 * cutoffHz / (rate / 2))
    numtaps |= 1
    h = scipy.signal.firwin(numtaps, cutoffHz * 0.99, window=('kaiser', beta), fs=rate)
    y = scipy.signal.fftconvolve(x, h[:, None], axes=0)
    d = (numtaps - 1) // 2
    return y[d:d + x.shape[0]]


def imp_noise(x: np.ndarray, levelDbfs: float, seed: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return x + 10 ** (levelDbfs / 20) * rng.standard_normal(x.shape)


def imp_pad(x: np.ndarray, rate: int, beforeSeconds: float, afterSeconds: float) -> np.ndarray:
    return np.concatenate([np.zeros((int(beforeSeconds * rate), x.shape[1])), x,
                           np.zeros((int(afterSeconds * rate), x.shape[1]))])


def apply_impairments(x: np.ndarray, rate: int, steps: list) -> tuple[np.ndarray, list]:
    """Applies steps in order; returns the audio and the steps with realised values filled in."""
    done = []
    for st in steps:
        st = dict(st)
        kind = st['type']
        if kind == 'reflection':
            x = imp_reflection(x, rate, st['delaySeconds'], st['gain'])
        elif kind == 'printThrough':
            x = imp_print_through(x, rate, st['delaySeconds'], st['levelDb'], st.get('lowpassHz', 4000.0))
        elif kind == 'hum':
            x = imp_hum(x, rate, st['mainsHz'], st['levelDbfs'], st.get('harmonics'), st.get('seed', 0))
        elif kind == 'tone':
            x = imp_tone(x, rate, st['toneHz'], st['seconds'], st['levelDbfs'])
        elif kind == 'speed':
            x, realised = imp_speed(x, rate, st['factor'])
            st['factor'] = realised
        elif kind == 'speedCurve':
            x = imp_speed_curve(x, rate, st['timesSeconds'], st['factors'])
        elif kind == 'flutter':
            x = imp_flutter(x, rate, st['depthPercent'], st['rateHz'])
        elif kind == 'reverse':
            x = imp_reverse(x, st['channels'])
        elif kind == 'channelDelay':
            x = imp_channel_delay(x, rate, st['delaySeconds'])
        elif kind == 'dropouts':
            x, st['events'] = imp_dropouts(x, rate, st['events'])
        elif kind == 'clip':
            x = imp_clip(x, st['overDb'])
        elif kind == 'lowpass':
            x = imp_lowpass(x, rate, st['cutoffHz'])
        elif kind == 'noise':
            x = imp_noise(x, st['levelDbfs'], st.get('seed', 1))
        elif kind == 'pad':
            x = imp_pad(x, rate, st['beforeSeconds'], st['afterSeconds'])
        elif kind == 'twoTracks':
            # Mono programme recorded on both tracks of a two-track tape.
            x = np.repeat(x.mean(axis=1, keepdims=True), 2, axis=1)
        else:
            raise ValueError(kind)
        done.append(st)
    peak = np.abs(x).max()
    if peak > 1.0 - 2 ** -23 and not any(s['type'] == 'clip' for s in done):
        x = x * (0.99 / peak)
        done.append({'type': 'gain', 'gainDb': db(0.99 / peak)})
    return x, done


def truth_of(steps: list, rate: int, clean_truth: dict) -> dict:
    """The truth an impaired clip carries, from its realised steps."""
    t = json.loads(json.dumps(clean_truth))
    factor = 1.0
    for st in steps:
        k = st['type']
        if k == 'speed':
            factor *= st['factor']
            if t.get('bandwidthHz'):
                t['bandwidthHz'] *= st['factor']
        elif k == 'speedCurve':
            t['speedCurve'] = {'timesSeconds': st['timesSeconds'], 'factors': st['factors']}
            factor *= float(np.mean(st['factors']))
        elif k == 'hum':
            t['hum'] = {'mainsHz': st['mainsHz'], 'levelDbfs': st['levelDbfs']}
        elif k == 'tone':
            t['tone'] = {'toneHz': st['toneHz'], 'seconds': st['seconds'], 'levelDbfs': st['levelDbfs']}
        elif k == 'flutter':
            t['flutter'] = {'depthPercent': st['depthPercent'], 'rateHz': st['rateHz']}
        elif k == 'reflection':
            t['reflection'] = {'delaySeconds': st['delaySeconds'], 'gain': st['gain']}
        elif k == 'printThrough':
            t['printThrough'] = {'delaySeconds': st['delaySeconds'], 'levelDb': st['levelDb']}
        elif k == 'reverse':
            t['reversedChannels'] = sorted(set(t.get('reversedChannels', [])) ^ set(st['channels']))
        elif k == 'channelDelay':
            t['interChannelDelaySeconds'] = st['delaySeconds']
        elif k == 'dropouts':
            t['dropouts'] = [{'startSeconds': e['startSeconds'], 'durationSeconds': e['durationSeconds'],
                              'depthDb': e.get('depthDb')} for e in st['events']]
        elif k == 'clip':
            t['clipped'] = True
        elif k == 'lowpass':
            t['bandwidthHz'] = min(st['cutoffHz'], t['bandwidthHz'] or math.inf)
        elif k == 'pad':
            pass
    # Events recorded in programme time move with a later speed change (applied after them).
    t['speedFactor'] = factor
    return t


# ---------------------------------------------------------------------------------------------
# Recipes
# ---------------------------------------------------------------------------------------------

NOTE = {'C': 0, 'C#': 1, 'D': 2, 'D#': 3, 'E': 4, 'F': 5, 'F#': 6, 'G': 7, 'G#': 8, 'A': 9, 'A#': 10, 'B': 11}


def key(name: str) -> int:
    """'A#1' -> MIDI number (A4 = 69)."""
    pitch, octave = name[:-1], int(name[-1])
    return 12 * (octave + 1) + NOTE[pitch]


def hz(k: int) -> float:
    return 440.0 * 2 ** ((k - 69) / 12)


def fluid(notes, programs, pans=None, end=None, gain=0.5, soundfont='fluid'):
    return {'type': 'fluidsynth', 'notes': notes, 'programs': programs, 'pans': pans or {}, 'end': end, 'gain': gain,
            'soundfont': soundfont}


def sustained(program, k, start=0.5, dur=4.0, vel=90, ch=0):
    return fluid([[start, dur, ch, k, vel]], {ch: program}, end=start + dur + 1.5)


def chords(program, roots, seconds_per_chord=2.0, vel=80, strum=0.0, repeat=1, ch=0):
    notes = []
    t = 0.3
    for _ in range(repeat):
        for r in roots:
            for i, iv in enumerate((0, 7, 12, 16, 19)):
                notes.append([t + i * strum, seconds_per_chord * 0.95, ch, r + iv, vel])
            t += seconds_per_chord
    return fluid(notes, {ch: program}, end=t + 1.0)


def melody(program, keys, step=0.4, dur=0.35, vel=85, ch=0, start=0.3):
    notes = [[start + i * step, dur, ch, k, vel] for i, k in enumerate(keys)]
    return fluid(notes, {ch: program}, end=start + len(keys) * step + 1.2)


def scale_walk(rng, root, n, scale=(0, 2, 4, 5, 7, 9, 11, 12)):
    return [root + scale[int(i)] for i in rng.integers(0, len(scale), n)]


GM_DRUMS = {'kick': 36, 'snare': 38, 'hat': 42, 'open_hat': 46, 'crash': 49, 'ride': 51, 'tom_lo': 45, 'tom_hi': 50,
            'clap': 39, 'tamb': 54, 'cowbell': 56, 'bongo_hi': 60, 'conga': 63, 'shaker': 70}


def gm_drum_loop(bpm, bars, pattern, vel=100, end_pad=1.0, soundfont='fluid'):
    step = 60.0 / bpm / 4
    notes = []
    for b in range(bars):
        for inst, steps in pattern.items():
            for s in steps:
                notes.append([0.2 + (b * 16 + s) * step, step * 0.9, 9, GM_DRUMS[inst], vel - (0 if s % 4 == 0 else 15)])
    return fluid(notes, {9: 0}, end=0.2 + bars * 16 * step + end_pad, soundfont=soundfont)


def hydrogen_loop(kit, files, bpm, bars, pattern, end_pad=0.8):
    step = 60.0 / bpm / 4
    hits = []
    for b in range(bars):
        for inst, steps in pattern.items():
            for s in steps:
                hits.append([0.2 + (b * 16 + s) * step, files[inst], 0.9 if s % 4 == 0 else 0.6])
    return {'type': 'hydrogen', 'kit': kit, 'hits': hits, 'end': 0.2 + bars * 16 * step + end_pad}


ROCK = {'kick': [0, 8, 10], 'snare': [4, 12], 'hat': [0, 2, 4, 6, 8, 10, 12, 14]}
SPARSE = {'kick': [0], 'snare': [8]}
FUNK = {'kick': [0, 3, 10], 'snare': [4, 12, 15], 'hat': list(range(16))}

KITS = {
    'ColomboAcousticDrumkit': {'kick': 'bassdrum-4mics-br-stereo-normal3.flac',
                               'snare': 'snare-opaque-normal-mic-normal_shot2.flac', 'hat': 'hihat-closed-4.flac'},
    'ForzeeStereo': {'kick': 'Kick-3.wav', 'snare': 'Snare-3.wav', 'hat': 'HiHatClosed-2.wav'},
    'Millo_MultiLayered3': {'kick': 'bd_02.flac', 'snare': 'sd_03.flac', 'hat': 'hh_02.flac'},
    'BJA_Pacific': {'kick': 'BD_03.aiff', 'snare': 'SN3_02.aiff', 'hat': 'HH2_03.aiff'},
}

SENTENCES = [
    'The reel was found in a cupboard at the old mill, wrapped in a flour sack and labelled in pencil.',
    'Mrs Edna Pell remembers the winter the canal froze and the barges stood still for six weeks.',
    'We played the transfer twice, once at each speed, and the second pass sounded right.',
    'My father kept the ledger for the weaving shed, and every Friday he read the names aloud.',
    'There is a hiss under the whole interview, and a knock where somebody set a cup on the table.',
    'The choir met on Thursdays in the schoolroom above the bakery in Orrin Street.',
    'Nobody could agree whether the bridge was built before the war or just after it.',
    'Turn the volume down before you listen, the opening tone is loud.',
]


def clean_recipes() -> list:
    """The clean clips. Each: id, split, kind, sampleRateHz, channels, source, description."""
    rng = np.random.default_rng(20261202)
    R = []

    def add(cid, kind, source, rate=48000, ch=1, desc='', split='dev', fast=False, rms_dbfs=-20.0, bits=24, lead=0.0,
            tags=()):
        R.append({'id': cid, 'set': 'clean', 'split': split, 'kind': kind, 'sampleRateHz': rate, 'channels': ch,
                  'source': source, 'description': desc, 'fast': fast, 'rmsDbfs': rms_dbfs, 'bits': bits,
                  'leadSeconds': lead, 'tags': list(tags)})

    rates = [44100, 48000, 96000]
    # Low piano notes under strong harmonics (false hum, false tone, pitch-period echoes).
    for i, n in enumerate(['A0', 'A#0', 'C1', 'E1', 'A1', 'A#1', 'B1', 'C2', 'E2', 'G2']):
        add(f'piano-low-{n.replace("#", "s")}', 'music', sustained(0, key(n), dur=5.0), rates[i % 3], 1 + (i % 2),
            f'Piano {n} ({hz(key(n)):.2f} Hz) held 5 s', fast=(n == 'A#1'), tags=['low-note', 'sustained'])
    add('piano-two-notes-As0-E2', 'music', fluid([[0.5, 4, 0, key('A#0'), 90], [0.5, 4, 0, key('E2'), 80]], {0: 0}, end=6),
        48000, 2, 'Piano A#0 and E2 together', tags=['low-note'])
    # Organ: steady low notes (the closest thing to hum a musician plays), with pauses.
    for i, n in enumerate(['A#1', 'B1', 'C2', 'G1']):
        notes = [[0.8, 3.0, 0, key(n), 90], [4.8, 3.0, 0, key(n), 90]]
        add(f'organ-{n.replace("#", "s")}', 'music', fluid(notes, {0: 19 if i % 2 else 16}, end=9), rates[i % 3], 1,
            f'Organ {n} held twice with a pause', fast=(n == 'A#1'), tags=['low-note', 'steady'])
    # Basses.
    for prog, name in [(32, 'acoustic'), (33, 'finger'), (34, 'pick'), (35, 'fretless'), (38, 'synth')]:
        keys = [key(k) for k in ['C2', 'C2', 'G1', 'A#1', 'C2', 'E2', 'F2', 'C2']]
        add(f'bass-{name}-C2', 'music', melody(prog, keys, step=0.5, dur=0.45), 44100, 1, f'{name} bass line around C2',
            fast=(name == 'finger'), tags=['low-note'])
        add(f'bass-{name}-held-C2', 'music', sustained(prog, key('C2'), dur=3.0), 48000, 1, f'{name} bass C2 held',
            tags=['low-note', 'sustained'])
    # Guitars: strummed chords with the open low E, repeated bars.
    for prog, name in [(24, 'nylon'), (25, 'steel'), (26, 'jazz'), (27, 'clean')]:
        add(f'guitar-{name}-strum', 'music', chords(prog, [key('E2'), key('A2'), key('D2'), key('E2')], 1.24, strum=0.015,
                                                    repeat=2), 44100, 2, f'{name} guitar strummed, bars of 1.24 s',
            fast=(name == 'steel'), tags=['repeated'])
        add(f'guitar-{name}-strum-slow', 'music', chords(prog, [key('E2'), key('C3'), key('G2')], 1.75, strum=0.02,
                                                         repeat=2), 48000, 1, f'{name} guitar, bars of 1.75 s',
            tags=['repeated'])
    # Strings, brass, reeds, choir, pads, bells, plucked, world.
    for prog, name, root in [(40, 'violin', 'G4'), (42, 'cello', 'C3'), (43, 'contrabass', 'E2'), (48, 'strings', 'C4'),
                             (52, 'choir', 'A3'), (56, 'trumpet', 'C5'), (57, 'trombone', 'A#2'), (58, 'tuba', 'F1'),
                             (60, 'horn', 'F3'), (61, 'brass', 'C4'), (65, 'alto-sax', 'D#4'), (68, 'oboe', 'A4'),
                             (71, 'clarinet', 'D4'), (73, 'flute', 'G5'), (21, 'accordion', 'C4'), (6, 'harpsichord', 'C4'),
                             (4, 'epiano', 'F3'), (11, 'vibraphone', 'C5'), (104, 'sitar', 'D3'), (105, 'banjo', 'G3'),
                             (107, 'koto', 'D4'), (108, 'kalimba', 'C5'), (114, 'steel-drums', 'C5')]:
        r = rates[len(R) % 3]
        keys = scale_walk(rng, key(root), 16)
        add(f'{name}-melody', 'music', melody(prog, keys, step=0.3 + 0.1 * (len(R) % 3), dur=0.28), r, 1 + (len(R) % 2),
            f'{name} melody from {root}', fast=(name == 'choir'))
        add(f'{name}-chords', 'music', chords(prog, [key(root), key(root) + 5, key(root) + 7, key(root)], 2.0), r, 2,
            f'{name} chords on {root}')
    for prog, name in [(88, 'pad-new-age'), (89, 'pad-warm'), (91, 'pad-choir'), (95, 'pad-sweep'), (94, 'pad-halo')]:
        add(f'{name}', 'music', chords(prog, [key('C3'), key('F3')], 4.0), 48000, 2, f'{name} sustained chords',
            tags=['sustained'])
    for prog, name, k in [(14, 'tubular-bells', 'C5'), (9, 'glockenspiel', 'C6'), (8, 'celesta', 'C5'), (10, 'music-box', 'E5'),
                          (112, 'tinkle-bell', 'C6'), (13, 'xylophone', 'G5')]:
        add(f'{name}', 'music', melody(prog, scale_walk(rng, key(k), 10), step=0.6, dur=0.55), 44100, 1, f'{name} notes')
    # Sound effects (short).
    for prog, name, k, d in [(120, 'fret-noise', 'C4', 0.8), (121, 'breath', 'C4', 1.5), (122, 'seashore', 'C4', 3.0),
                             (123, 'bird', 'C5', 1.5), (124, 'telephone', 'C4', 2.0), (125, 'helicopter', 'C4', 3.0),
                             (126, 'applause', 'C4', 3.0), (127, 'gunshot', 'C3', 0.5), (116, 'taiko', 'C3', 0.4),
                             (117, 'melodic-tom', 'C3', 0.3), (118, 'synth-drum', 'C3', 0.3), (115, 'woodblock', 'C5', 0.2)]:
        add(f'fx-{name}', 'effect', fluid([[0.2, d, 0, key(k), 100]], {0: prog}, end=0.2 + d + 1.0), 48000, 1,
            f'GM effect {name}', fast=(name == 'applause'))
        add(f'fx-{name}-twice', 'effect', fluid([[0.2, d, 0, key(k), 100], [0.4 + d * 1.5, d, 0, key(k), 90]], {0: prog},
                                                end=0.4 + d * 2.5 + 1.0), 44100, 2, f'GM effect {name} twice')
    # GM drum kit loops (percussive, gaps of digital silence between hits in the sparse one).
    for bpm, bars, pat, name in [(90, 4, ROCK, 'rock-90'), (120, 4, ROCK, 'rock-120'), (100, 4, FUNK, 'funk-100'),
                                 (70, 2, SPARSE, 'sparse-70'), (140, 8, ROCK, 'rock-140'),
                                 (96, 4, {'conga': [0, 3, 6, 10], 'bongo_hi': [2, 8, 12, 14], 'shaker': list(range(0, 16, 2))},
                                  'hand-96')]:
        add(f'gm-drums-{name}', 'drums', gm_drum_loop(bpm, bars, pat), 48000 if bpm % 20 else 44100, 2,
            f'GM kit {name}', fast=(name == 'rock-120'), tags=['repeated'])
    add('gm-drums-loop-1.75s', 'drums', gm_drum_loop(137.14, 1, ROCK, end_pad=0.1), 44100, 1, 'GM kit one 1.75 s bar',
        tags=['short'])
    # Hydrogen kit loops (recorded drums, stereo microphones).
    for bpm, bars, pat, name in [(92, 4, ROCK, 'rock-92'), (118, 4, FUNK, 'funk-118'), (60, 2, SPARSE, 'sparse-60')]:
        add(f'h2-colombo-{name}', 'drums', hydrogen_loop('ColomboAcousticDrumkit', KITS['ColomboAcousticDrumkit'], bpm, bars, pat),
            44100, 2, f'Hydrogen Colombo kit {name}', fast=(name == 'rock-92'), tags=['repeated', 'spaced-mics'])
    for bpm, bars, pat, name in [(104, 4, ROCK, 'rock-104'), (76, 2, SPARSE, 'sparse-76'), (132, 4, FUNK, 'funk-132')]:
        add(f'h2-forzee-{name}', 'drums', hydrogen_loop('ForzeeStereo', KITS['ForzeeStereo'], bpm, bars, pat),
            48000, 2, f'Hydrogen Forzee stereo kit {name}', tags=['repeated', 'spaced-mics'])
    # Ensembles: bass + piano + drums, stereo with pans.
    for i, (root, bpm) in enumerate([('C', 100), ('F', 84), ('G', 120)]):
        step = 60 / bpm
        r0 = key(root + '2')
        notes = []
        for b in range(8):
            t = 0.3 + b * 4 * step
            notes += [[t + q * step, step * 0.9, 1, r0 + (0, 7, 5, 7)[q], 90] for q in range(4)]
            notes += [[t, 4 * step * 0.95, 0, r0 + 12 + iv, 70] for iv in (0, 4, 7, 12)]
            notes += [[t + q * step, 0.1, 9, 36 if q % 2 == 0 else 38, 100] for q in range(4)]
            notes += [[t + q * step / 2, 0.05, 9, 42, 70] for q in range(8)]
        add(f'band-{root}-{bpm}', 'music', fluid(notes, {0: 0, 1: 33, 9: 0}, pans={0: 30, 1: 64, 9: 90}, end=0.3 + 32 * step + 1),
            rates[i], 2, f'piano, bass and drums in {root}', tags=['repeated'])
    # Voice: Festival kal diphones (recorded), sentences of our own.
    for i in range(12):
        s = [SENTENCES[(i * 5 + j) % len(SENTENCES)] for j in range(2 + i % 3)]
        add(f'voice-kal-{i}', 'voice', {'type': 'festival', 'voice': 'kal', 'sentences': s, 'pause': 0.5 + 0.1 * i},
            [44100, 48000, 96000][i % 3], 1, 'Festival kal voice', fast=(i == 0), rms_dbfs=-22.0)
    add('voice-kal-long', 'voice', {'type': 'festival', 'voice': 'kal', 'sentences': SENTENCES * 3, 'pause': 0.8}, 48000, 1,
        'Festival kal voice, about two minutes', rms_dbfs=-22.0, tags=['long'])
    add('voice-kal-stereo', 'voice', {'type': 'festival', 'voice': 'kal', 'sentences': SENTENCES[:3], 'pause': 0.6}, 48000, 2,
        'Festival kal voice on two identical channels', rms_dbfs=-22.0)
    # A longer piano piece (minutes).
    keys = []
    for bar in range(48):
        keys += scale_walk(rng, key('C4') + (0, 5, 7, -5)[bar % 4], 4)
    add('piano-piece-long', 'music', melody(0, keys, step=0.42, dur=0.6, vel=75), 44100, 2, 'Piano piece, about 80 s',
        tags=['long'])

    # ---- holdout: material the estimators were not tuned on ----
    for i, (prog, name, root) in enumerate([(0, 'piano', 'C3'), (33, 'bass', 'E1'), (25, 'guitar', 'E2'), (48, 'strings', 'G3'),
                                            (19, 'organ', 'A#1'), (52, 'choir', 'D4'), (61, 'brass', 'F3'), (14, 'bells', 'C5')]):
        add(f'hold-timgm-{name}-melody', 'music', dict(melody(prog, scale_walk(rng, key(root), 14), step=0.45, dur=0.4),
                                                       soundfont='timgm'), rates[i % 3], 1 + i % 2,
            f'TimGM6mb {name} melody', split='holdout')
        add(f'hold-timgm-{name}-held', 'music', dict(sustained(prog, key(root), dur=4.0), soundfont='timgm'), rates[(i + 1) % 3], 1,
            f'TimGM6mb {name} {root} held', split='holdout', tags=['sustained'])
    for kit, bpm in [('Millo_MultiLayered3', 98), ('BJA_Pacific', 126)]:
        add(f'hold-h2-{kit.split("_")[0].lower()}-{bpm}', 'drums', hydrogen_loop(kit, KITS[kit], bpm, 4, ROCK), 44100, 2,
            f'Hydrogen {kit} kit', split='holdout', tags=['repeated'])
    add('hold-timgm-drums', 'drums', gm_drum_loop(110, 4, FUNK, soundfont='timgm'), 48000, 2, 'TimGM6mb drum kit', split='holdout')
    for i in range(4):
        s = [SENTENCES[(3 * i + j) % len(SENTENCES)] for j in range(3)]
        add(f'hold-voice-ked-{i}', 'voice', {'type': 'festival', 'voice': 'ked', 'sentences': s, 'pause': 0.6}, [48000, 44100][i % 2],
            1, 'Festival ked voice', split='holdout', rms_dbfs=-22.0)
    prompts = sorted(p[:-4] for p in os.listdir(ASTERISK) if p.endswith('.wav')) if os.path.isdir(ASTERISK) else []
    for i in range(4):
        pick = [prompts[(37 * i + 11 * j) % len(prompts)] for j in range(8)] if prompts else []
        add(f'hold-voice-prompts-{i}', 'voice', {'type': 'asterisk', 'prompts': pick, 'pause': 0.5}, 16000 if i % 2 else 44100, 1,
            'Asterisk English prompts (recorded, 8 kHz)', split='holdout', rms_dbfs=-22.0)
    return R


def impaired_recipes(clean: list) -> list:
    """Impaired copies of clean clips: the faults the analyses look for, with exact truth."""
    rng = np.random.default_rng(7)
    by_id = {c['id']: c for c in clean}
    R = []

    def add(cid, base, steps, desc, fast=False, reference=None):
        """reference: step types left out of a reference file (what a correction should give back)."""
        c = by_id[base]
        R.append({'id': cid, 'set': 'impaired', 'split': c['split'], 'kind': c['kind'], 'cleanId': base,
                  'sampleRateHz': c['sampleRateHz'], 'channels': c['channels'], 'steps': steps, 'description': desc,
                  'fast': fast, 'bits': c['bits'], 'tags': c['tags'], **({'reference': reference} if reference else {})})

    def pick(kind=None, split='dev', min_channels=1, tag=None, exclude_tags=('short',)):
        return [c['id'] for c in clean if (kind is None or c['kind'] in kind) and c['split'] == split
                and c['channels'] >= min_channels and (tag is None or tag in c['tags'])
                and not any(t in c['tags'] for t in exclude_tags)]

    music = pick(('music',))
    voice = pick(('voice',))
    drums = pick(('drums',))
    hold = [c['id'] for c in clean if c['split'] == 'holdout']

    # Speed with hum (hum recorded on the tape, so it moves with the speed), with tone, and bare.
    factors = [0.5, 0.9412, 0.97, 0.985, 1.0127, 1.0293, 1.06, 1.0595, 2.0]
    for i, base in enumerate(music[::2] + voice + drums[::2]):
        f = factors[i % len(factors)]
        mains = 50 if i % 2 else 60
        add(f'speed-hum-{i:02d}-{base}', base, [{'type': 'hum', 'mainsHz': mains, 'levelDbfs': -50.0, 'seed': i},
                                                {'type': 'speed', 'factor': f}],
            f'hum {mains} Hz at -50 dBFS, played x{f}', fast=(i in (0, 5)), reference=['speed'])
    for i, base in enumerate(voice + music[1::6]):
        add(f'hum-only-{i:02d}-{base}', base, [{'type': 'hum', 'mainsHz': 50 if i % 2 else 60, 'levelDbfs': -50.0, 'seed': 100 + i}],
            'hum at -50 dBFS, right speed', fast=(i == 0))
    for i, base in enumerate(music[::5] + voice[:3]):
        f = factors[(i + 3) % len(factors)]
        tone = [1000.0, 3150.0, 10000.0, 400.0][i % 4]
        if tone * f >= 0.45 * by_id[base]['sampleRateHz']:
            tone = 1000.0
        add(f'speed-tone-{i:02d}-{base}', base, [{'type': 'tone', 'toneHz': tone, 'seconds': 6.0, 'levelDbfs': -12.0},
                                                 {'type': 'speed', 'factor': f}], f'{tone:g} Hz line-up tone, played x{f}')
    for i, base in enumerate(music[3::4]):
        cents = [-80, -37, -10, 18, 35, 60][i % 6]
        add(f'speed-bare-{i:02d}-{base}', base, [{'type': 'speed', 'factor': 2 ** (cents / 1200)}],
            f'played {cents:+d} cents fast, no hum or tone')
    for i, base in enumerate(voice[:4] + music[:4]):
        add(f'drift-{i:02d}-{base}', base, [{'type': 'hum', 'mainsHz': 50, 'levelDbfs': -50.0, 'seed': 200 + i},
                                            {'type': 'speedCurve', 'timesSeconds': [0.0, 60.0], 'factors': [1.0, 1.0 + 0.01 * 60 / 20]}],
            'hum 50 Hz, speed ramping 1.000 -> 1.010 over 20 s', reference=['speedCurve'])
    # Flutter from a 3150 Hz test tone at the head.
    for i, (depth, rate_hz) in enumerate([(0.1, 4.0), (0.05, 1.0), (0.2, 10.0), (0.1, 0.5)]):
        base = voice[i % len(voice)]
        add(f'flutter-{i:02d}-{base}', base, [{'type': 'tone', 'toneHz': 3150.0, 'seconds': 8.0, 'levelDbfs': -12.0},
                                              {'type': 'flutter', 'depthPercent': depth, 'rateHz': rate_hz}],
            f'3150 Hz tone then voice, flutter {depth} % at {rate_hz} Hz')
    # Reflections on voice, music and drums (including pitch periods of low notes and voices).
    delays_ms = [0.5, 1.0, 2.93, 4.1, 9.0, 13.1, 15.3, 17.3, 30.6, 38.0, 61.3, 100.0, 150.0, 230.0, 300.0, 400.0]
    gains = [0.9, 0.65, 0.5, 0.35, 0.25, 0.2, 0.1, -0.45, -0.3, -0.1]
    pool = voice + music + drums
    for i, base in enumerate(pool):
        for j in range(2):
            d = delays_ms[(i * 2 + j) % len(delays_ms)]
            g = gains[(i * 3 + j) % len(gains)]
            d_jit = d * (1 + 0.013 * rng.uniform(-1, 1)) if d >= 2 else d
            add(f'reflection-{i:02d}{j}-{base}', base, [{'type': 'reflection', 'delaySeconds': round(d_jit, 6) / 1000, 'gain': g}],
                f'reflection {d_jit:.3f} ms, gain {g}', fast=(i == 0 and j == 0), reference=['reflection'])
    # Reflections at one and two pitch periods of low notes.
    for base, k in [('piano-low-C2', 'C2'), ('bass-finger-held-C2', 'C2'), ('piano-low-A1', 'A1'), ('organ-As1', 'A#1')]:
        per = 1 / hz(key(k))
        for m, g in [(1, 0.5), (2, -0.4)]:
            add(f'reflection-period{m}-{base}', base, [{'type': 'reflection', 'delaySeconds': m * per, 'gain': g}],
                f'reflection at {m} period(s) of {k} ({m * per * 1000:.3f} ms), gain {g}', reference=['reflection'])
    # Reflection plus a faint print-through (which one matters).
    for i, base in enumerate(voice[:3] + music[:3]):
        d = [13.1, 61.3, 24.0, 9.0, 38.0, 120.0][i] / 1000
        add(f'reflection-pt-{i:02d}-{base}', base, [{'type': 'pad', 'beforeSeconds': 2.5, 'afterSeconds': 2.5},
                                                    {'type': 'reflection', 'delaySeconds': d, 'gain': 0.35 if i % 2 == 0 else 0.3},
                                                    {'type': 'printThrough', 'delaySeconds': -1.5, 'levelDb': -50.0}],
            f'reflection {d * 1000:.1f} ms plus print-through -50 dB 1.5 s before', reference=['reflection'])
    # Print-through before/after a loud entry in silence or hiss.
    pt_levels = [-40.0, -45.0, -50.0, -55.0, -60.0]
    pt_delays = [-0.6, -1.37, -1.5, -2.2, -3.0, 0.9, 1.5, 2.2, 3.0, -1.0]
    for i, base in enumerate(music[::2] + voice + drums):
        lvl = pt_levels[i % len(pt_levels)]
        d = pt_delays[i % len(pt_delays)]
        floor = [] if i % 2 == 0 else [{'type': 'noise', 'levelDbfs': -75.0, 'seed': 300 + i}]
        pad = {'type': 'pad', 'beforeSeconds': 3.5 if d < 0 else 0.5, 'afterSeconds': 3.5 if d > 0 else 0.5}
        add(f'printthrough-{i:02d}-{base}', base, [pad, {'type': 'printThrough', 'delaySeconds': d, 'levelDb': lvl}] + floor,
            f'print-through {lvl} dB at {d:+.2f} s in {"silence" if not floor else "hiss"}', fast=(i == 1))
    # Reversed channels (whole clip for mono; one channel of stereo).
    for i, base in enumerate(pick(('music', 'drums', 'voice', 'effect'), exclude_tags=())[::2] + pick(('drums',), exclude_tags=())[1::2]):
        ch = by_id[base]['channels']
        add(f'reversed-{i:02d}-{base}', base, [{'type': 'reverse', 'channels': [1] if ch == 2 and i % 2 else list(range(ch))}],
            'reversed' + (' channel 2' if ch == 2 and i % 2 else ''), fast=(i == 0))
    # Azimuth: mono programme on both tracks, one track delayed by a head-sized amount (stereo
    # programme has inter-channel delays of its own, so its true head delay is unknown).
    az = [3.1e-6, 6.26e-6, 12e-6, 17e-6, 33e-6, 52.5e-6, 100e-6, 250e-6]
    mono = [c['id'] for c in clean if c['channels'] == 1 and c['split'] == 'dev' and c['kind'] != 'effect']
    for i, base in enumerate(mono[::3]):
        d = az[i % len(az)] * (1 if i % 3 else -1)
        R.append({'id': f'azimuth-{i:02d}-{base}', 'set': 'impaired', 'split': 'dev', 'kind': by_id[base]['kind'], 'cleanId': base,
                  'sampleRateHz': by_id[base]['sampleRateHz'], 'channels': 2, 'bits': by_id[base]['bits'], 'tags': by_id[base]['tags'],
                  'steps': [{'type': 'twoTracks'}, {'type': 'channelDelay', 'delaySeconds': d}]
                  + ([{'type': 'noise', 'levelDbfs': -62.0, 'seed': 500 + i}] if i % 2 else []),
                  'description': f'mono programme on two tracks, channel 2 delayed {d * 1e6:.2f} us'
                  + (', hiss on each track' if i % 2 else ''), 'fast': i == 0})
    # Dropouts: exact zeros inside programme, and level dips.
    for i, base in enumerate(voice + music[::3] + drums[:2]):
        c = by_id[base]
        events = [{'place': 'inside', 'durationSeconds': [0.005, 0.02, 0.05, 0.01][j], 'depthDb': None if (i + j) % 4 else -25.0}
                  for j in range(4)]
        add(f'dropouts-{i:02d}-{base}', base, [{'type': 'dropouts', 'events': events}], 'dropouts (zeros and dips)', fast=(i == 0))
    # Clipping and low-pass.
    for i, base in enumerate(music[::4] + voice[:3]):
        add(f'clip-{i:02d}-{base}', base, [{'type': 'clip', 'overDb': [3.0, 6.0, 1.0][i % 3]}], 'clipped')
        add(f'lowpass-{i:02d}-{base}', base, [{'type': 'lowpass', 'cutoffHz': [7000.0, 4000.0, 10000.0, 3000.0][i % 4]}], 'low-passed',
            fast=(i == 0))
    # Holdout impairments (same kinds, material not used for tuning).
    for i, base in enumerate(hold):
        kind = i % 6
        if kind == 0:
            steps = [{'type': 'hum', 'mainsHz': 50 if i % 2 else 60, 'levelDbfs': -50.0, 'seed': 400 + i},
                     {'type': 'speed', 'factor': factors[i % len(factors)]}]
        elif kind == 1:
            steps = [{'type': 'reflection', 'delaySeconds': delays_ms[(i * 5) % len(delays_ms)] / 1000, 'gain': [0.5, -0.35, 0.25][i % 3]}]
        elif kind == 2:
            steps = [{'type': 'pad', 'beforeSeconds': 3.0, 'afterSeconds': 0.5},
                     {'type': 'printThrough', 'delaySeconds': -1.2, 'levelDb': -45.0}]
        elif kind == 3:
            steps = [{'type': 'reverse', 'channels': list(range(by_id[base]['channels']))}]
        elif kind == 4:
            steps = [{'type': 'dropouts', 'events': [{'place': 'inside', 'durationSeconds': 0.01, 'depthDb': None}]}]
        else:
            steps = [{'type': 'lowpass', 'cutoffHz': 5000.0}]
        add(f'hold-{steps[-1]["type"].lower()}-{i:02d}-{base}', base, steps, 'holdout ' + steps[-1]['type'])
    return R


# ---------------------------------------------------------------------------------------------
# Build
# ---------------------------------------------------------------------------------------------

def recipe_hash(r: dict) -> str:
    return hashlib.sha256(json.dumps({'v': CORPUS_VERSION, 'r': r}, sort_keys=True).encode()).hexdigest()[:16]


def clean_truth() -> dict:
    return {'speedFactor': 1.0, 'hum': None, 'tone': None, 'speedCurve': None, 'flutter': None, 'reflection': None,
            'printThrough': None, 'reversedChannels': [], 'interChannelDelaySeconds': None, 'dropouts': [],
            'clipped': False, 'bandwidthHz': None}


def build_clean(args) -> dict:
    recipe, out_dir = args
    path = os.path.join(out_dir, 'clean', recipe['id'] + '.wav')
    h = recipe_hash(recipe)
    stamp = path + '.hash'
    if not (os.path.exists(path) and os.path.exists(stamp) and open(stamp).read() == h):
        with tempfile.TemporaryDirectory() as tmp:
            x = render_clean(recipe, tmp)
        write_wav(path, recipe['sampleRateHz'], x, recipe['bits'])
        with open(stamp, 'w') as f:
            f.write(h)
    rate, x = read_wav(path)
    truth = clean_truth()
    # Speech rendered at 16 kHz (Festival) or recorded at 8 kHz (Asterisk) stops at half that rate.
    native = {'festival': 8000.0, 'asterisk': 4000.0}.get(recipe['source']['type'])
    if native:
        truth['bandwidthHz'] = native
    return entry(recipe, path, out_dir, rate, x, truth, [])


def build_impaired(args) -> dict:
    recipe, out_dir, clean_entry = args
    path = os.path.join(out_dir, 'impaired', recipe['id'] + '.wav')
    h = recipe_hash({'r': recipe, 'clean': clean_entry['hash']})
    stamp = path + '.hash'
    steps_path = path + '.steps.json'
    if not (os.path.exists(path) and os.path.exists(stamp) and open(stamp).read() == h and os.path.exists(steps_path)):
        rate, x = read_wav(os.path.join(out_dir, clean_entry['file']))
        y, done = apply_impairments(x, rate, recipe['steps'])
        write_wav(path, rate, y, 32 if recipe['bits'] == 32 else 24)
        with open(steps_path, 'w') as f:
            json.dump(done, f)
        with open(stamp, 'w') as f:
            f.write(h)
    with open(steps_path) as f:
        done = json.load(f)
    ref_path = None
    if recipe.get('reference'):
        ref_path = path[:-4] + '.ref.wav'
        if not (os.path.exists(ref_path) and os.path.exists(ref_path + '.hash') and open(ref_path + '.hash').read() == h):
            rate, x = read_wav(os.path.join(out_dir, clean_entry['file']))
            # The same steps with the same realised values, minus the fault the correction removes.
            kept = [st for st in done if st['type'] not in recipe['reference'] and st['type'] != 'gain']
            ref, _ = apply_impairments(x, rate, kept)
            gains = [st['gainDb'] for st in done if st['type'] == 'gain']
            ref = ref * (10 ** (gains[0] / 20) if gains else 1.0)
            write_wav(ref_path, rate, ref, 32)
            with open(ref_path + '.hash', 'w') as f:
                f.write(h)
    rate, y = read_wav(path)
    e = entry(recipe, path, out_dir, rate, y, truth_of(done, rate, clean_entry['truth']), done)
    if ref_path:
        e['referenceFile'] = os.path.relpath(ref_path, out_dir)
        e['referenceWithout'] = recipe['reference']
    return e


def entry(recipe: dict, path: str, out_dir: str, rate: int, x: np.ndarray, truth: dict, steps: list) -> dict:
    e = {k: v for k, v in recipe.items() if k not in ('source', 'steps', 'rmsDbfs', 'leadSeconds', 'reference')}
    e.update({'file': os.path.relpath(path, out_dir), 'frames': int(x.shape[0]), 'durationSeconds': x.shape[0] / rate,
              'sampleRateHz': rate, 'channels': int(x.shape[1]), 'truth': truth, 'steps': steps,
              'hash': open(path + '.hash').read()})
    if recipe.get('source'):
        e['sourceDescription'] = describe_source(recipe['source'])
    return e


def describe_source(src: dict) -> str:
    if src['type'] == 'fluidsynth':
        sf = 'TimGM6mb' if src.get('soundfont') == 'timgm' else 'FluidR3 GM'
        return f"{sf} soundfont through fluidsynth (reverb and chorus off), GM programs {sorted(set(src['programs'].values()))}"
    if src['type'] == 'hydrogen':
        return f"Hydrogen drum kit {src['kit']}"
    if src['type'] == 'festival':
        return f"Festival {src['voice']} diphone voice"
    return 'Asterisk English prompts (en_US_f_Allison)'


def package_versions() -> dict:
    out = {}
    for p in PACKAGES:
        r = subprocess.run(['dpkg-query', '-W', '-f=${Version}', p], capture_output=True, text=True)
        out[p] = r.stdout.strip() if r.returncode == 0 else None
    out['python3'] = sys.version.split()[0]
    out['numpy'] = np.__version__
    out['scipy'] = scipy.__version__
    return out


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split('\n\n')[0])
    ap.add_argument('--out', required=True)
    ap.add_argument('--fast', action='store_true', help='only the clips of the quick slice run by npm test')
    ap.add_argument('--jobs', type=int, default=max(1, min(4, os.cpu_count() or 1)))
    ap.add_argument('--hash', action='store_true', help='print the recipe hash and exit')
    a = ap.parse_args()
    clean = clean_recipes()
    impaired = impaired_recipes(clean)
    all_hash = recipe_hash({'clean': clean, 'impaired': impaired, 'fast': a.fast})
    if a.hash:
        print(all_hash)
        return 0
    if a.fast:
        impaired = [r for r in impaired if r['fast']]
        need = {r['cleanId'] for r in impaired}
        clean = [r for r in clean if r['fast'] or r['id'] in need]
    for sub in ('clean', 'impaired'):
        os.makedirs(os.path.join(a.out, sub), exist_ok=True)
    with ProcessPoolExecutor(a.jobs) as pool:
        clean_entries = list(pool.map(build_clean, [(r, a.out) for r in clean]))
        by_id = {e['id']: e for e in clean_entries}
        impaired_entries = list(pool.map(build_impaired, [(r, a.out, by_id[r['cleanId']]) for r in impaired]))
    manifest = {'version': CORPUS_VERSION, 'recipeHash': all_hash, 'fast': a.fast, 'packages': package_versions(),
                'clips': clean_entries + impaired_entries}
    tmp = os.path.join(a.out, 'manifest.json.part')
    with open(tmp, 'w') as f:
        json.dump(manifest, f, indent=1)
    os.replace(tmp, os.path.join(a.out, 'manifest.json'))
    n_clean = len(clean_entries)
    secs = sum(e['durationSeconds'] for e in clean_entries + impaired_entries)
    print(f'corpus: {n_clean} clean and {len(impaired_entries)} impaired clips, {secs / 60:.1f} min of audio, in {a.out}')
    return 0


if __name__ == '__main__':
    sys.exit(main())
