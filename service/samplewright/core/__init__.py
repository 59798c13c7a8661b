"""Pure computation for samplewright: numpy and scipy only, no web framework.

Imports point one way: the HTTP layer uses the schemas, the schemas use this package,
and this package uses nothing of either.
"""
