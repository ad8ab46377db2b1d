"""Studies built on the trade: weather over time (``simulate``) and what-if sweeps (``sweep``).

Both run many independent pieces of work and may spread them over processes or
machines with dask.distributed (:mod:`tradeopt.study.cluster`, the one helper both use).
No physics here: the pieces call the physics, mission and trade layers.
"""
