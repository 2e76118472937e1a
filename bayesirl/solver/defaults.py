"""Default tolerances and work caps of the solvers (no imports: read by the file readers
without loading the solvers)."""

# Span tolerance of the soft Bellman solve (see solver.soft's stopping rule).
DEFAULT_TOL = 1e-10

# Relative tolerance of the adjoint solve: the gradient's relative error is about this
# (measured on random MDPs, S = 10^4: 1e-8 -> 8.7e-9). A sampler needs far less: leapfrog
# steps are volume-preserving and reversible for any deterministic vector field, and the
# acceptance uses the log-likelihood, whose own tolerance is separate. Gradient checks pass
# a tighter value (BoltzmannLikelihood(gradient_rtol=...)).
ADJOINT_RTOL = 1e-8

# Caps on the work of one evaluation (BoltzmannLikelihood's max_newton_steps and
# max_linear_iterations; problem files set them in [solver]).
MAX_NEWTON_STEPS = 50
MAX_LINEAR_ITERATIONS = 3000
