"""The page's sections, state and inputs (Streamlit only; app.py at the top level runs them)."""
