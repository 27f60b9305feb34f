"""Helpers shared by the tests: synthetic captures, the ngspice reference cases, one ADC model.

- :mod:`tests.support.quantise`: the one model of a scope's ADC (noise, then codes) that every
  test uses;
- :mod:`tests.support.synth`: small synthetic sawtooth captures;
- :mod:`tests.support.builders`: captures from per-cycle model functions, Dow-model ramps by
  ``scipy.integrate.solve_ivp``, and averaged cycles built directly for the diagnosis;
- :mod:`tests.support.spice`: the stored ngspice captures, the live-ngspice runner and one
  writer per file layout the importer reads. ``python -m tests.support.spice [bits]
  [noise_mV] [seed]`` (from the project root) prints the engine's errors on every case.

Nothing here is a test; test modules import from here and never from one another.
"""
