"""diag dashboard: drop in a hop's receive-level logs, see why it faded and what each cause cost.

Run it with ``.venv/bin/streamlit run dashboard.py`` (settings in ``.streamlit/config.toml``: loopback only, upload
limit).  The page lives in ``diag/ui/`` (``app``: the page; ``forms``: inputs; ``charts``: result screens); this file
only starts it.
"""
from diag.ui.app import run

run()
