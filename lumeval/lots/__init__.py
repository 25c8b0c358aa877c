"""Production lots: input expansion, reading many files, batching, the lot run and its runners.

The modules here hold what ``lumeval lot`` does beyond the per-spectrum engine; the command in
:mod:`lumeval.commands.lot` only parses options, calls them and renders the result.
"""
