"""Pure, vectorized physical models: numbers in, numbers out.

One module per physics area: :mod:`units`, :mod:`path`, :mod:`antenna`,
:mod:`noise`, :mod:`propagation` (the only module that imports itur),
:mod:`waveform` and :mod:`budget`.
"""
