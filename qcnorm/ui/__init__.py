"""The Streamlit user interface: the only package that imports streamlit."""
