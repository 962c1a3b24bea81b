"""``Voiced`` to a Standard MIDI File (format 1), through music21's MIDI objects.

Track 0 carries tempo and meter; then one track per part on its own channel
(channel 10, the General MIDI percussion channel, is skipped) with its
General MIDI program.  Notes sound at their performed times (``perf_onset``, ``perf_duration``: swing is
played, not written); velocities follow the dynamics of each statement, and the
default (mf) keeps a mock-up from starting loud.  Nothing is random unless
``humanize`` is asked for, and then a seeded generator makes it repeatable.
With a :class:`~arrange.rhythm_section.RhythmSection` its parts follow as tracks
(guitar, piano, bass on their own channels, drums on the General MIDI percussion
channel 10), playing the written parts' values (see :mod:`.rhythm_section`).
"""
from __future__ import annotations

import random
from dataclasses import dataclass
from fractions import Fraction

from arrange.rhythm_section.values import RhythmSection
from arrange.voicing.layers import VoicedLayer
from arrange.voicing.voicer import Voiced
from arrange.writers.common import channel_for
from arrange.writers.marks import dynamic_of

__all__ = ["midi_bytes", "MidiOptions", "TICKS", "channel_for", "VELOCITY"]

TICKS = 480          # ticks per quarter note
DEFAULT_VELOCITY = 80   # mf
# MIDI velocity per dynamic: the common mapping of notation programs and sample
# libraries (common practice; no standard fixes it), pp 33 .. ff 112
VELOCITY = {"ppp": 20, "pp": 33, "p": 49, "mp": 64, "mf": 80, "f": 96, "ff": 112, "fff": 124}


@dataclass(frozen=True, slots=True)
class MidiOptions:
    dynamics: tuple[str, ...] = ("mf",)
    humanize: float = 0.0        # milliseconds of timing spread, 0 = none
    seed: int = 1


def track_head(name: str, channel: int, program: int) -> list:  # noqa: ANN001
    """A part track's first events: its name and its General MIDI program (1-based in,
    0-based on the wire); ``channel`` is music21's 1-based channel."""
    from music21 import midi

    nm = midi.MidiEvent(None, type=midi.MetaEvents.SEQUENCE_TRACK_NAME)
    nm.data = name.encode("utf-8")
    pc = midi.MidiEvent(None, type=midi.ChannelVoiceMessages.PROGRAM_CHANGE, channel=channel)
    pc.data = program - 1
    return [(0, 0, nm), (0, 1, pc)]


def _tick(q: Fraction) -> int:
    return int(round(q * TICKS))


def midi_bytes(voiced: Voiced, tempo: float, options: MidiOptions | None = None,
               layers: tuple = (), rhythm: RhythmSection | None = None) -> bytes:
    from music21 import midi

    opts = options or MidiOptions()
    rng = random.Random(opts.seed)
    spread = int(round(opts.humanize / 1000 * tempo / 60 * TICKS))   # ms -> ticks

    mf = midi.MidiFile()
    mf.ticksPerQuarterNote = TICKS
    mf.format = 1
    line = voiced.harmonized.line
    lead_in = line.pickup      # a pickup (negative onsets) starts the file at tick 0

    def track_from(events: list[tuple[int, int, midi.MidiEvent]], index: int) -> midi.MidiTrack:
        trk = midi.MidiTrack(index)
        events.sort(key=lambda e: (e[0], e[1]))
        last = 0
        for tick, _order, ev in events:
            dt = midi.DeltaTime(trk, time=tick - last)
            trk.events.append(dt)
            ev.track = trk
            trk.events.append(ev)
            last = tick
        end_dt = midi.DeltaTime(trk, time=0)
        eot = midi.MidiEvent(trk, type=midi.MetaEvents.END_OF_TRACK)
        eot.data = b""
        trk.events.extend([end_dt, eot])
        trk.updateEvents()
        return trk

    conductor: list[tuple[int, int, midi.MidiEvent]] = []
    name = midi.MidiEvent(None, type=midi.MetaEvents.SEQUENCE_TRACK_NAME)
    name.data = b"tempo"
    conductor.append((0, 0, name))
    ts = midi.MidiEvent(None, type=midi.MetaEvents.TIME_SIGNATURE)
    den_pow = {1: 0, 2: 1, 4: 2, 8: 3, 16: 4}[line.meter.denominator]
    ts.data = bytes([line.meter.numerator, den_pow, 24, 8])
    conductor.append((0, 1, ts))
    tp = midi.MidiEvent(None, type=midi.MetaEvents.SET_TEMPO)
    mpq = int(round(60_000_000 / (tempo * float(getattr(line, "tempo_scale", 1)))))
    tp.data = midi.putNumber(mpq, 3)
    conductor.append((0, 2, tp))
    mf.tracks.append(track_from(conductor, 0))

    for k, part in enumerate(voiced.section.parts):
        ch = channel_for(k) + 1   # music21's MidiEvent.channel is 1-based
        evs = track_head(part.name, ch, part.instrument.program)
        prev_end: dict[int, int] = {}
        for ve in voiced.events:
            n = ve.event.note
            pitch = ve.pitches[k]
            on = _tick(n.perf_onset + lead_in)
            off = max(on + 1, _tick(n.perf_onset + n.perf_duration + lead_in) - 1)
            velocity = VELOCITY[dynamic_of(n.statement, opts.dynamics)]
            if spread:
                on = max(0, on + rng.randint(-spread, spread))
                off = max(on + 1, off + rng.randint(-spread, spread) // 2)
                velocity = min(127, max(1, velocity + rng.randint(-6, 6)))
            if prev_end.get(pitch, -1) > on:   # never overlap the same key
                on = prev_end[pitch]
                off = max(off, on + 1)
            non = midi.MidiEvent(None, type=midi.ChannelVoiceMessages.NOTE_ON, channel=ch)
            non.pitch = pitch
            non.velocity = velocity
            noff = midi.MidiEvent(None, type=midi.ChannelVoiceMessages.NOTE_OFF, channel=ch)
            noff.pitch = pitch
            noff.velocity = 0
            evs.append((on, 3, non))
            evs.append((off, 2, noff))
            prev_end[pitch] = off
        mf.tracks.append(track_from(evs, k + 1))
    rhythm_count = 0
    if rhythm is not None:
        from arrange.writers.rhythm_section import DRUM_CHANNEL, rhythm_tracks

        n_parts = len(voiced.section.parts)
        velocity = VELOCITY[opts.dynamics[0]]
        for track_name, program, notes in rhythm_tracks(rhythm, line):
            channel = DRUM_CHANNEL if program is None else channel_for(n_parts + rhythm_count)
            evs = []
            nm = midi.MidiEvent(None, type=midi.MetaEvents.SEQUENCE_TRACK_NAME)
            nm.data = track_name.encode("utf-8")
            evs.append((0, 0, nm))
            if program is not None:
                rhythm_count += 1
                pc = midi.MidiEvent(None, type=midi.ChannelVoiceMessages.PROGRAM_CHANGE,
                                    channel=channel + 1)
                pc.data = program - 1
                evs.append((0, 1, pc))
            for start, length, pitch, accent in notes:
                on = _tick(start)
                off = max(on + 1, _tick(start + length) - 1)
                for kind, tick, vel, order in ((midi.ChannelVoiceMessages.NOTE_ON, on,
                                                min(127, max(1, velocity + accent)), 3),
                                               (midi.ChannelVoiceMessages.NOTE_OFF, off, 0, 2)):
                    ev = midi.MidiEvent(None, type=kind, channel=channel + 1)
                    ev.pitch = pitch
                    ev.velocity = vel
                    evs.append((tick, order, ev))
            mf.tracks.append(track_from(evs, len(mf.tracks)))
    if layers:   # after the rhythm section's bass channel, when there is one
        first = len(voiced.section.parts) + rhythm_count
        mf.tracks.extend(layer_tracks(layers, first, lead_in, track_from, _tick))
    data: bytes = mf.writestr()
    return data


def layer_tracks(layers: tuple[VoicedLayer, ...], first_index: int, lead_in: Fraction,
                 track_from, tick) -> list:  # noqa: ANN001
    """MIDI tracks of the layers' parts (track numbers after the lead section's),
    with ``track_from`` and ``tick`` the MIDI writer's own helpers."""
    from music21 import midi

    tracks = []
    index = first_index
    for vl in layers:
        vel = vl.layer.velocity
        for k, part in enumerate(vl.layer.section.parts):
            ch = channel_for(index) + 1
            evs: list[tuple[int, int, midi.MidiEvent]] = track_head(part.name, ch,
                                                                    part.instrument.program)
            for n in vl.notes:
                if n.pitches[k] is None:
                    continue
                on = tick(n.onset + lead_in)
                off = max(on + 1, tick(n.onset + n.duration + lead_in) - 1)
                non = midi.MidiEvent(None, type=midi.ChannelVoiceMessages.NOTE_ON, channel=ch)
                non.pitch, non.velocity = n.pitches[k], vel
                noff = midi.MidiEvent(None, type=midi.ChannelVoiceMessages.NOTE_OFF, channel=ch)
                noff.pitch, noff.velocity = n.pitches[k], 0
                evs.append((on, 3, non))
                evs.append((off, 2, noff))
            tracks.append(track_from(evs, index + 1))
            index += 1
    return tracks
