"""Small file writers shared by the Python fixture and corpus scripts: MIDI variable-length
quantities and PCM WAV files through Python's own `wave` module (independent of the project's
writer, so the TypeScript readers are checked against something outside the project)."""
import wave

import numpy as np


def vlq(n: int) -> bytes:
    """A MIDI variable-length quantity (Standard MIDI File 1.0, "Conventions")."""
    out = [n & 0x7F]
    n >>= 7
    while n:
        out.append(0x80 | (n & 0x7F))
        n >>= 7
    return bytes(reversed(out))


def write_pcm_wav(path: str, samples: np.ndarray, rate: int, bits: int) -> None:
    """Integer samples (frames × channels, already in range) as 16- or 24-bit little-endian PCM."""
    with wave.open(path, 'wb') as w:
        w.setnchannels(samples.shape[1])
        w.setsampwidth(bits // 8)
        w.setframerate(rate)
        if bits == 16:
            w.writeframes(samples.astype('<i2').tobytes())
        else:
            b = samples.astype('<i4').view(np.uint8).reshape(-1, 4)[:, :3]
            w.writeframes(b.tobytes())
