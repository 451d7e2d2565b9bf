"""The Streamlit dashboard, in three modules: ``app`` (the page: data in, cached analysis, tabs, downloads),
``forms`` (sidebar, parameter and detection forms) and ``charts`` (the result screens).  ``dashboard.py`` at the
repository root is the entry point (``streamlit run dashboard.py``)."""
