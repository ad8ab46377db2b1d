"""Planning: a scenario turned into typed plans, between the inputs and the trade.

:mod:`~tradeopt.plan.contacts` (passes, gaps, geometry per site), :mod:`~tradeopt.plan.demand`
(bits per day) and :mod:`~tradeopt.plan.mission` (the required rate and its source, the link
geometry, the storage check and the ground-network choice). No function here modifies the scenario.
"""
