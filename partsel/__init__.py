"""partsel: choose operational amplifiers for single-supply analog designs.

The package keeps a catalogue of amplifier output-stage characteristics, predicts how a part's
output stage behaves in a given circuit (conduction-mode changes, crossover glitch, THD, swing,
slew and bandwidth margins) and ranks parts against a design's requirements.

Predictions are estimates from a behavioural macro-model. Confirm them on the bench or in a
full transistor-level simulation, and follow your organisation's design rules where safety is
involved.
"""

__version__ = "0.1.0"
