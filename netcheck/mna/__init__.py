"""Circuit → System → Response: modified nodal analysis (assembly), the solve engines
(dense, sparse, pole–zero form), sparse pole search, adjoint sensitivities and the
batched solves of many part-value samples at once."""
