"""netdim's model zoo: small bundled models, their input specs and model cards.

* :mod:`model_zoo.greenhouse` - the fictional greenhouse-climate simulator
  (``model_zoo.greenhouse:simulate``), the demo scenario.
* :mod:`model_zoo.nets` - the Torch network classes of the zoo.
* :mod:`model_zoo.build` - trains and exports every model
  (``python -m model_zoo.build``).
* :mod:`model_zoo.exact` - exact ANOVA answers of the validation networks.

Importing the package imports nothing heavy; Torch is needed only by ``nets``,
``export`` and ``build``.
"""
