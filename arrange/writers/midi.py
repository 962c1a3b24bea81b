"""``Voiced`` to a Standard MIDI File (format 1), through mido.

mido is the well-kept library for Standard MIDI Files (messages, meta messages,
variable-length delta times, running tracks): the file is written from our own events
without building a score first.

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

from dataclasses import dataclass
from fractions import Fraction
from typing import TYPE_CHECKING, Any

from arrange.voicing.voicer import Voiced
from arrange.writers.common import channel_for, shared_staves, tied_on
from arrange.writers.marks import dynamic_of

if TYPE_CHECKING:
    from arrange.rhythm_section.values import RhythmSection
    from arrange.voicing.layers import VoicedLayer

__all__ = ["midi_bytes", "MidiOptions", "TICKS", "channel_for", "VELOCITY"]

TICKS = 480          # ticks per quarter note
DEFAULT_VELOCITY = 80   # mf
# MIDI velocity per dynamic: the common mapping of notation programs and sample
# libraries (common practice; no standard fixes it), pp 33 .. ff 112
VELOCITY = {"ppp": 20, "pp": 33, "p": 49, "mp": 64, "mf": 80, "f": 96, "ff": 112, "fff": 124}


@dataclass(frozen=True, slots=True, eq=False)
class MidiOptions:
    """The mock-up's dynamics per statement and its optional, seeded humanizing."""
    dynamics: tuple[str, ...] = ("mf",)
    humanize: float = 0.0        # milliseconds of timing spread, 0 = none
    seed: int = 1


def track_head(name: str, channel: int, program: int) -> list[tuple[int, int, Any]]:
    """A part track's first events: its name and its General MIDI program (1-based in,
    0-based on the wire); ``channel`` is 0-based."""
    import mido

    return [(0, 0, mido.MetaMessage("track_name", name=name)),
            (0, 1, mido.Message("program_change", channel=channel, program=program - 1))]


def _tick(q: Fraction) -> int:
    """``round(q * TICKS)`` (half to even, as ``Fraction.__round__``) in integers."""
    floor, rem = divmod(q.numerator * TICKS, q.denominator)
    twice = 2 * rem
    if twice < q.denominator:
        return floor
    if twice > q.denominator:
        return floor + 1
    return floor + (floor & 1)


def _note(events: list[tuple[int, int, Any]], channel: int, pitch: int, on: int, off: int, velocity: int) -> None:
    # the message itself is made once, with its delta time, in track_from (mido checks
    # every field of every message it makes: one check per note event, not two)
    events.append((on, 3, ("note_on", channel, pitch, velocity)))
    events.append((off, 2, ("note_off", channel, pitch, 0)))


def track_from(events: list[tuple[int, int, Any]]) -> Any:
    """A mido track from (absolute tick, order at that tick, message) rows; a message is
    a mido message or a note row ``(type, channel, note, velocity)`` from :func:`_note`."""
    import mido

    trk = mido.MidiTrack()
    events.sort(key=lambda e: (e[0], e[1]))
    last = 0
    for tick, _order, msg in events:
        if isinstance(msg, tuple):
            kind, channel, note, velocity = msg
            trk.append(mido.Message(kind, channel=channel, note=note, velocity=velocity, time=tick - last))
        else:
            trk.append(msg.copy(time=tick - last))
        last = tick
    trk.append(mido.MetaMessage("end_of_track", time=0))
    return trk


def midi_bytes(voiced: Voiced, tempo: float, options: MidiOptions | None = None,
               layers: tuple = (), rhythm: RhythmSection | None = None) -> bytes:
    import io

    import mido

    opts = options or MidiOptions()
    spread = int(round(opts.humanize / 1000 * tempo / 60 * TICKS))   # ms -> ticks
    if spread:
        import random

        rng = random.Random(opts.seed)

    mf = mido.MidiFile(type=1, ticks_per_beat=TICKS)
    line = voiced.harmonized.line
    lead_in = line.pickup      # a pickup (negative onsets) starts the file at tick 0

    mpq = int(round(60_000_000 / (tempo * float(getattr(line, "tempo_scale", 1)))))
    mf.tracks.append(track_from([
        (0, 0, mido.MetaMessage("track_name", name="tempo")),
        (0, 1, mido.MetaMessage("time_signature", numerator=line.meter.numerator,
                                denominator=line.meter.denominator, clocks_per_click=24,
                                notated_32nd_notes_per_beat=8)),
        (0, 2, mido.MetaMessage("set_tempo", tempo=mpq)),
    ]))

    shared = shared_staves(voiced, layers)     # a form's player who reads one staff (common.shared_staves)
    for k, part in enumerate(voiced.section.parts):
        ch = channel_for(k)
        evs = track_head(part.name, ch, part.instrument.program)
        prev_end: dict[int, int] = {}
        played: list[list[int]] = []          # [pitch, on, off, velocity] per struck note
        for i, ve in enumerate(voiced.events):
            n = ve.event.note
            pitch = ve.pitches[k]
            if pitch is None:                      # a form's staff resting while another section plays
                continue
            if played and tied_on(voiced, i, k):   # held over a chord change: not struck again
                played[-1][2] = max(played[-1][2], _tick(n.perf_onset + n.perf_duration + lead_in) - 1)
                prev_end[pitch] = played[-1][2]
                continue
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
            played.append([pitch, on, off, velocity])
            prev_end[pitch] = off
        for pitch, on, off, velocity in played:
            _note(evs, ch, pitch, on, off, velocity)
        for (li, kk), staff_k in shared.items():    # a layer's part its player plays here too
            if staff_k == k:
                _layer_notes(evs, ch, layers[li], kk, lead_in)
        mf.tracks.append(track_from(evs))
    rhythm_count = 0
    if rhythm is not None:
        from arrange.writers.rhythm_section import DRUM_CHANNEL, rhythm_tracks

        n_parts = len(voiced.section.parts)
        velocity = VELOCITY[opts.dynamics[0]]
        for track_name, program, notes in rhythm_tracks(rhythm, line):
            channel = DRUM_CHANNEL if program is None else channel_for(n_parts + rhythm_count)
            if program is not None:
                rhythm_count += 1
                evs = track_head(track_name, channel, program)
            else:
                evs = [(0, 0, mido.MetaMessage("track_name", name=track_name))]
            for start, length, pitch, accent in notes:
                on = _tick(start)
                _note(evs, channel, pitch, on, max(on + 1, _tick(start + length) - 1),
                      min(127, max(1, velocity + accent)))
            mf.tracks.append(track_from(evs))
    if layers:   # after the rhythm section's bass channel, when there is one
        first = len(voiced.section.parts) + rhythm_count
        mf.tracks.extend(layer_tracks(layers, first, lead_in, set(shared)))
    buf = io.BytesIO()
    mf.save(file=buf)
    return buf.getvalue()


def layer_tracks(layers: tuple[VoicedLayer, ...], first_index: int, lead_in: Fraction,
                 skip: set[tuple[int, int]] | None = None) -> list[Any]:
    """MIDI tracks of the layers' parts (channels after the lead section's); ``skip``: the
    (layer, part)s played on a form's section track by the same player."""
    tracks = []
    index = first_index
    for li, vl in enumerate(layers):
        for k, part in enumerate(vl.layer.section.parts):
            if skip and (li, k) in skip:
                continue
            ch = channel_for(index)
            evs = track_head(part.name, ch, part.instrument.program)
            _layer_notes(evs, ch, vl, k, lead_in)
            tracks.append(track_from(evs))
            index += 1
    return tracks


def _layer_notes(evs: list[tuple[int, int, Any]], ch: int, vl: VoicedLayer, k: int, lead_in: Fraction) -> None:
    vel = vl.layer.velocity
    for n in vl.notes:
        pitch = n.pitches[k]
        if pitch is None:
            continue
        on = _tick(n.onset + lead_in)
        _note(evs, ch, pitch, on, max(on + 1, _tick(n.onset + n.duration + lead_in) - 1), vel)
