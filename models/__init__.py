"""The demo and reference models with their data (installed as ``budget.demo``; copied out
by ``budget demo DIR``). The numbers of the Velmora scenario are invented."""
