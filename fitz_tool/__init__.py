"""fitz_tool: bench measurements of a passive component -> equivalent circuit with honest uncertainties.

The public API (the CLI is a thin face over the same functions)::

    import fitz_tool as ft
    m = ft.read_measurement("sample_measurements/choke_vi_scope.csv")
    result = ft.fit(m, "Rs + L1 || Cp")
"""

__version__ = "0.1.0"
