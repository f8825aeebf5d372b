"""Characterising an amplifier from its terminals: a maker's SPICE model or a bench capture.

- :mod:`partsel.characterise.model_file`: reads and checks SPICE model files (data only: no
  ngspice commands, no files outside the ones given) and extracts the subcircuit to test;
- :mod:`partsel.characterise.benches`: partsel's own test benches around it, as ngspice decks;
- :mod:`partsel.characterise.measure`: the measurements, plain functions over arrays;
- :mod:`partsel.characterise.run`: runs the benches in parallel (``partsel characterise``);
- :mod:`partsel.characterise.record`: the catalogue record and the measurement report;
- :mod:`partsel.characterise.figures`: one figure per bench;
- :mod:`partsel.characterise.fit`: fitting a part's stage to a scope capture
  (``partsel fit-capture``) by least squares on partsel's own simulation.

Importing this package imports none of them.
"""
