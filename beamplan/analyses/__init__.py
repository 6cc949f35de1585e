"""Analyses on top of the planner: what-if cases, outage sweeps, single points of failure."""
