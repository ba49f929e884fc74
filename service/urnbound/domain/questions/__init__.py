"""The questions the service answers, one module each; the registry collects them.

A module here defines ``QUESTION``, a :class:`~urnbound.domain.question.Question`: its
path, parameters, answer members and the call that computes it. Adding a module (with
its numerics in ``urnbound.core`` and its tests) is all a new question takes: routes,
schemas, the OpenAPI document and the command line follow from the registry.
"""
