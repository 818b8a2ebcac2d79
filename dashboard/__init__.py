"""The Streamlit dashboard: thin pages over the ``tracker`` library."""
