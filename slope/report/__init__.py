"""Report layer: figures, risk chart, tables and the self-contained HTML report.

Everything here takes plain data (numpy arrays, lists, dicts) so it can be
used and tested without the engines; see each module's "Input shapes".
"""
from slipfield.fields._lazy import lazy_exports

# Loaded on first use (matplotlib only with the figures; see .figures)
_WHERE = {
    **{name: "figures" for name in (
        "fit_fs_distributions", "plot_failure_geometry", "plot_failure_map", "plot_field_realisation",
        "plot_fs_distribution", "plot_fs_vs_theta", "plot_pf_comparison", "plot_pf_convergence",
        "plot_pf_vs_theta", "plot_realisations", "plot_section", "plot_tornado", "plot_variance_reduction")},
    "atomic_write_bytes": "..files", "atomic_write_text": "..files",
    **{name: "html" for name in ("CAUTION", "figure_png_bytes", "figure_svg_text", "render_report", "save_figure",
                                 "write_report")},
    **{name: "risk" for name in ("annual_probability", "plot_risk_chart", "risk_points", "tolerability_line")},
    **{name: "style" for name in ("CYCLE", "PALETTE", "report_style")},
    **{name: "tables" for name in ("format_value", "summary_table", "table_to_html", "write_csv")},
}

__all__ = [
    "atomic_write_bytes",
    "atomic_write_text",
    "CAUTION",
    "CYCLE",
    "PALETTE",
    "annual_probability",
    "figure_png_bytes",
    "figure_svg_text",
    "fit_fs_distributions",
    "format_value",
    "plot_failure_geometry",
    "plot_failure_map",
    "plot_field_realisation",
    "plot_fs_distribution",
    "plot_fs_vs_theta",
    "plot_pf_comparison",
    "plot_pf_convergence",
    "plot_pf_vs_theta",
    "plot_realisations",
    "plot_risk_chart",
    "plot_section",
    "plot_tornado",
    "plot_variance_reduction",
    "render_report",
    "report_style",
    "risk_points",
    "save_figure",
    "summary_table",
    "table_to_html",
    "tolerability_line",
    "write_csv",
    "write_report",
]

__getattr__, __dir__ = lazy_exports(globals(), _WHERE)
