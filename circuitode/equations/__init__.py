"""From a circuit and its switch states to ``dx/dt = A x + B u``, ``y = C x + D u``.

``companion.py`` lays out the companion network of one configuration
(capacitors as voltage sources, inductors as current sources); ``mna.py``
stamps and solves its modified-nodal-analysis system, batched over samples;
``statespace.py`` turns the solution into A, B, C, D, caches them per
configuration and finds the initial state.
"""
