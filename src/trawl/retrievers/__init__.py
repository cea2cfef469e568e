"""Retrievers: encoder specs (``spec``), model loading (``loading``) and the retriever
families behind them (``dense``, ``static``, ``lexical``).

Import from the submodules; this package file stays empty so that importing a spec never
loads a model library and no submodule imports the package back.
"""
