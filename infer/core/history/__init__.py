"""Population histories: epochs, founder events, and the frequencies they imply.

:mod:`~infer.core.history.spec` describes a history; :mod:`~infer.core.history.deterministic`
carries the exact balance through it; :mod:`~infer.core.history.distribution` carries the
allele-frequency distribution under drift (exact Wright–Fisher transition for small 2Ne,
:mod:`~infer.core.history.discrete`; forward diffusion equation above,
:mod:`~infer.core.history.diffusion`); :mod:`~infer.core.history.simulate` draws forward
Wright–Fisher replicates of the same history.
"""
