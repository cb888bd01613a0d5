"""Views of run directories: matplotlib plots, PyVista scenes, the HTML report."""
