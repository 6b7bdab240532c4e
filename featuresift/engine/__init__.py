"""The evaluation engine: fits and scores batches of feature subsets.

Modules, in the order data flows through them:

* :mod:`~featuresift.engine.records` — :class:`Evaluation`, the fold scores and status
  of one subset;
* :mod:`~featuresift.engine.fitplan` — what one fit does (shared column-wise
  preprocessing, direct scores);
* :mod:`~featuresift.engine.evaluator` — :class:`CrossValidationEvaluator` and
  :class:`CriterionEvaluator`: batches, cache, parallel dispatch through joblib;
* :mod:`~featuresift.engine.racing` — early stopping of hopeless candidates;
* :mod:`~featuresift.engine.journal` — the on-disk evaluation journal (resume);
* :mod:`~featuresift.engine.progress` — progress display.

The engine never knows which strategy asks.
"""
