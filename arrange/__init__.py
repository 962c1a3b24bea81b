"""arrange: grow a motif into a retrograde-inversion chain, lay a groove on it,
harmonize it, voice it for a section, and write score, parts, MIDI and report.

Stages (each a module with one entry function, immutable values between them):

* :func:`arrange.chain.build_chain`   motif -> ``Chain``
* :func:`arrange.rhythm.lay_rhythm`   ``Chain`` -> ``Line``
* :func:`arrange.harmony.harmonize`   ``Line`` -> ``Harmonized``
* :func:`arrange.voicing.voice`       ``Harmonized`` -> ``Voiced``
* :mod:`arrange.writers`              ``Voiced`` -> files

Importing the package is cheap: no stage pulls in music21.
"""
__version__ = "0.1.0"
__all__ = ["__version__"]
