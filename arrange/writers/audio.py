"""Optional audio: the MIDI mock-up rendered to a WAV by the ``fluidsynth`` program.

Needs the program and a General MIDI SoundFont (Debian: ``apt install fluidsynth
fluid-soundfont-gm``; or name a SoundFont in ``ARRANGE_SOUNDFONT``).  Without
them :func:`wav_bytes` returns ``None`` and :func:`missing_message` says how to get
them.  The result is peak-normalised to -1 dBFS, never louder: playback volume
is the listener's to set.
"""
from __future__ import annotations

import array
import io
import os
import shutil
import subprocess
import sys
import tempfile
import wave
from pathlib import Path

from arrange.errors import OutputError

__all__ = ["find_fluidsynth", "find_soundfont", "missing_message", "wav_bytes", "normalise",
           "PEAK_DBFS"]

PEAK_DBFS = -1.0
SAMPLE_RATE = 44100
SOUNDFONTS = ("/usr/share/sounds/sf2/FluidR3_GM.sf2", "/usr/share/sounds/sf2/default-GM.sf2",
              "/usr/share/soundfonts/default.sf2", "/usr/share/soundfonts/FluidR3_GM.sf2",
              "/usr/local/share/soundfonts/default.sf2", "/opt/homebrew/share/soundfonts/default.sf2")


def find_fluidsynth() -> str | None:
    return shutil.which("fluidsynth")


def find_soundfont() -> Path | None:
    env = os.environ.get("ARRANGE_SOUNDFONT")
    if env:     # a SoundFont the user names is the one to use, or none
        return Path(env) if Path(env).is_file() else None
    for cand in SOUNDFONTS:
        if Path(cand).is_file():
            return Path(cand)
    return None


def missing_message() -> str | None:
    """One line saying what is missing for --audio, or None when all is there."""
    need = []
    if find_fluidsynth() is None:
        need.append("the fluidsynth program")
    if find_soundfont() is None:
        env = os.environ.get("ARRANGE_SOUNDFONT")
        need.append(f"the SoundFont {env!r} (ARRANGE_SOUNDFONT)" if env else "a General MIDI SoundFont")
    if not need:
        return None
    how = ("apt install fluidsynth fluid-soundfont-gm" if sys.platform.startswith("linux")
           else "install fluidsynth and a GM SoundFont")
    return (f"audio skipped: {' and '.join(need)} not found ({how}; "
            "or set ARRANGE_SOUNDFONT to a .sf2 file)")


def normalise(wav: bytes, peak_dbfs: float = PEAK_DBFS) -> bytes:
    """Scale 16-bit PCM so its highest peak sits at ``peak_dbfs`` (quiet files are raised,
    loud ones lowered; silence stays silent)."""
    with wave.open(io.BytesIO(wav)) as r:
        params = r.getparams()
        frames = r.readframes(r.getnframes())
    if params.sampwidth != 2:
        raise OutputError(f"fluidsynth wrote {8 * params.sampwidth}-bit audio", where="--audio",
                          accepted="16-bit PCM")
    samples = array.array("h", frames)
    if sys.byteorder == "big":
        samples.byteswap()
    peak = max((abs(s) for s in samples), default=0)
    if peak:
        target = 32767 * 10 ** (peak_dbfs / 20)
        gain = target / peak
        samples = array.array("h", (max(-32768, min(32767, round(s * gain))) for s in samples))
    if sys.byteorder == "big":
        samples.byteswap()
    out = io.BytesIO()
    with wave.open(out, "wb") as w:
        w.setnchannels(params.nchannels)
        w.setsampwidth(2)
        w.setframerate(params.framerate)
        w.writeframes(samples.tobytes())
    return out.getvalue()


def wav_bytes(midi: bytes) -> bytes | None:
    """The MIDI file as a normalised WAV, or None when fluidsynth or a SoundFont is missing."""
    program, font = find_fluidsynth(), find_soundfont()
    if program is None or font is None:
        return None
    with tempfile.TemporaryDirectory(prefix="arrange-audio-") as tmp:
        mid, wav = Path(tmp) / "in.mid", Path(tmp) / "out.wav"
        mid.write_bytes(midi)
        cmd = [program, "-ni", "-q", "-g", "0.5", "-r", str(SAMPLE_RATE), "-F", str(wav),
               "-T", "wav", "-O", "s16", str(font), str(mid)]
        try:
            subprocess.run(cmd, check=True, capture_output=True, timeout=300)
        except (OSError, subprocess.SubprocessError) as err:
            raise OutputError(f"fluidsynth could not render the mock-up: {err}", where="--audio",
                              accepted="a working fluidsynth and SoundFont") from None
        return normalise(wav.read_bytes())
