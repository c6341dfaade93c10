#!/usr/bin/env python3
"""Small real-material clips for the echo tests, built at test time (nothing large is committed).

Clean clips are recorded samples: the Fluid R3 GM soundfont (Debian fluid-soundfont-gm) rendered by
fluidsynth with its own reverb and chorus off (-R 0 -C 0), and the Festival kal diphone voice
(Debian festvox-kallpc16k, recorded diphones). Impairments are applied exactly with numpy:
y = x + g*x(t - tau) by the DFT shift theorem on a zero-padded copy (Oppenheim & Schafer, DTSP,
DFT properties); print-through as an attenuated, low-passed (scipy Butterworth, zero phase),
delayed copy. Writes float32 WAVs and truth.json into OUT.

usage: real_clips.py OUT
"""
import json, os, struct, subprocess, sys
import numpy as np
from scipy import signal
from scipy.io import wavfile

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), '..', 'helpers'))
from audio_files import vlq  # noqa: E402

OUT = sys.argv[1]
SF2 = '/usr/share/sounds/sf2/FluidR3_GM.sf2'
os.makedirs(OUT, exist_ok=True)
truth = {}


def render(program, notes, rate, seconds, channel=0):
    """notes: (start s, midi key, duration s, velocity); 120 bpm, 480 ticks per beat. Channel 9 is
    the General MIDI percussion channel (the key picks the drum)."""
    ev = [(0.0, 0, bytes([0xC0 | channel, program]))]
    for t, k, d, v in notes:
        ev += [(t, 2, bytes([0x90 | channel, k, v])), (t + d, 1, bytes([0x80 | channel, k, 0]))]
    ev.sort(key=lambda e: (e[0], e[1]))
    data, last = bytearray(vlq(0) + bytes([0xFF, 0x51, 3, 0x07, 0xA1, 0x20])), 0
    for t, _, msg in ev:
        tick = int(round(t * 960))
        data += vlq(tick - last) + msg
        last = tick
    data += vlq(480) + bytes([0xFF, 0x2F, 0])
    mid, wav = os.path.join(OUT, 'x.mid'), os.path.join(OUT, 'x.wav')
    with open(mid, 'wb') as f:
        f.write(b'MThd' + struct.pack('>IHHH', 6, 0, 1, 480) + b'MTrk' + struct.pack('>I', len(data)) + data)
    subprocess.run(['fluidsynth', '-ni', '-q', '-R', '0', '-C', '0', '-g', '0.6', '-r', str(rate), '-F', wav, SF2, mid],
                   check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    _, x = wavfile.read(wav)
    x = x.astype(np.float64).mean(axis=1) / 32768.0
    n = int(seconds * rate)
    return np.pad(x, (0, max(0, n - len(x))))[:n]


def speech(text, name):
    txt, wav = os.path.join(OUT, name + '.txt'), os.path.join(OUT, name + '.raw.wav')
    with open(txt, 'w') as f:
        f.write(text)
    subprocess.run(['text2wave', '-o', wav, txt], check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    r, x = wavfile.read(wav)
    return r, x.astype(np.float64) / 32768.0


def delay(x, d):
    n = len(x)
    size = 1 << int(np.ceil(np.log2(n + abs(d) + 4096)))
    lead = int(np.ceil(-d)) + 2048 if d < 0 else 0
    p = np.zeros(size)
    p[lead:lead + n] = x
    X = np.fft.rfft(p)
    ph = np.exp(-2j * np.pi * np.arange(len(X)) * d / size)
    ph[-1] = np.cos(np.pi * d)
    return np.fft.irfft(X * ph, size)[lead:lead + n]


def print_copy(x, rate, delay_s, level_db, lowpass_hz):
    b, a = signal.butter(2, lowpass_hz / (rate / 2))
    return 10 ** (level_db / 20) * delay(signal.filtfilt(b, a, x), delay_s * rate)


def save(name, x, rate, **t):
    if t.get('clean'):
        x = x * (0.5 / max(1e-9, np.max(np.abs(x))))
    wavfile.write(os.path.join(OUT, name + '.wav'), rate, x.astype(np.float32))
    truth[name] = {'rateHz': rate, **t}
    return x


def pitch_period(x, r):
    """Median pitch period over the loudest frames (normalised autocorrelation, 60–400 Hz)."""
    n = int(0.04 * r)
    starts = range(0, len(x) - n, n // 2)
    e = np.array([np.sum(x[i:i + n] ** 2) for i in starts])
    per = []
    for j, i in enumerate(starts):
        if e[j] < np.percentile(e, 60):
            continue
        f = x[i:i + n] - np.mean(x[i:i + n])
        ac = np.correlate(f, f, 'full')[n - 1:]
        lo, hi = int(r / 400), int(r / 60)
        k = lo + int(np.argmax(ac[lo:hi]))
        if ac[0] > 0 and ac[k] / ac[0] > 0.5:
            per.append(k / r)
    return float(np.median(per))


# Clean: a sustained bass note C2 (65.4 Hz: period 15.29 ms), a low piano note A#1, strummed guitar
# repeating one bar of 1.24 s.
save('bass-c2', render(33, [(0.1, 36, 2.6, 100)], 44100, 3.2), 44100, clean=True)
save('piano-a#1', render(0, [(0.2, 34, 3.5, 100)], 48000, 4.5), 48000, clean=True)
strum = []
for bar in range(9):
    t = 0.1 + 1.24 * bar
    for k, key in enumerate([40, 47, 52, 56, 59, 64]):
        strum += [(t + 0.012 * k, key, 0.55, 95), (t + 0.62 + 0.01 * (5 - k), key, 0.55, 80)]
save('guitar-strum', render(25, strum, 44100, 11.5), 44100, clean=True)

# Voice (Festival kal, 16 kHz) with a reflection at two pitch periods, and with a reflection of
# 13.1 ms / 0.35 plus a faint print-through 1.1 s before (-45 dB, highs reduced).
parts = []
for i, text in enumerate(['The archive received forty reels of tape from the old county radio station.',
                          'Each transfer is checked twice before the original box goes back on the shelf.',
                          'Please keep the raw transfer untouched and work only on a copy of the file.']):
    r16, s = speech(text, f's{i}')
    parts += [s, np.zeros(int(0.35 * r16))]
voice = np.concatenate(parts)
P = pitch_period(voice, r16)
voice = save('voice-clean', voice, r16, clean=True, pitchPeriodSeconds=P)
save('voice-2periods', voice + 0.42 * delay(voice, 2 * P * r16), r16, reflection={'delaySeconds': 2 * P, 'gain': 0.42})
both = voice + 0.35 * delay(voice, 0.0131 * r16) + print_copy(voice, r16, -1.1, -45, 4000)
save('voice-refl-pt', both, r16, reflection={'delaySeconds': 0.0131, 'gain': 0.35}, printThrough={'delaySeconds': -1.1, 'levelDb': -45})

# The same voice resampled to 44.1 kHz (scipy polyphase, 441/160; then nothing above 7.9 kHz, set
# to zero in the DFT) and rounded to 24 bits, as a 16 kHz recording stored at a CD rate is: above
# 8 kHz only rounding noise. Clean, and with a reflection of 13 ms / -0.45 (rounded likewise).
def q24(x):
    return np.round(x * 2.0 ** 23) / 2.0 ** 23


v44 = signal.resample_poly(voice, 441, 160)
V = np.fft.rfft(v44)
V[np.fft.rfftfreq(len(v44), 1 / 44100) > 7900] = 0
v44 = np.fft.irfft(V, len(v44))
v44 = q24(v44 * (0.5 / np.max(np.abs(v44))))
save('voice44-clean', v44, 44100, clean=True)
save('voice44-refl', q24(v44 - 0.45 * delay(v44, 0.013 * 44100)), 44100, reflection={'delaySeconds': 0.013, 'gain': -0.45})

# A piano entry after 2.5 s of digital silence, with a -40 dB pre-echo 1.37 s before it.
chords = []
for i, root in enumerate([45, 50, 43, 48, 45]):
    chords += [(2.5 + 1.1 * i, root + k, 1.0, 105) for k in (0, 4, 7, 12)]
piano = render(0, chords, 48000, 10.5)
piano = save('piano-entry-clean', piano, 48000, clean=True)
save('piano-entry-pre', piano + print_copy(piano, 48000, -1.37, -40, 5000), 48000, printThrough={'delaySeconds': -1.37, 'levelDb': -40})

# A rock drum loop (GM standard kit: kick 36, snare 38, closed hi-hat 42) at 120 bpm after 2 s of
# digital silence: the loop repeats every second, and neither that nor the gaps between the hits
# are echoes.
beats = []
for b in range(12):
    t = 2.0 + 0.5 * b
    beats += [(t, 36 if b % 2 == 0 else 38, 0.3, 110), (t, 42, 0.1, 90), (t + 0.25, 42, 0.1, 70)]
drums = render(0, beats, 44100, 10.0, channel=9)
save('drums-clean', drums, 44100, clean=True)

for f in os.listdir(OUT):
    if f.endswith(('.mid', '.txt', '.raw.wav')) or f == 'x.wav':
        os.remove(os.path.join(OUT, f))
with open(os.path.join(OUT, 'truth.json'), 'w') as f:
    json.dump(truth, f, indent=1)
