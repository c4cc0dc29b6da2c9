"""Streamlit front end of rheology: widgets in, scenario mapping out, results shown (no physics)."""
