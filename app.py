"""qcnorm workbench: page layout and navigation only (run with `streamlit run app.py`).

Pages live in qcnorm/ui/ (one module, one render() each) and are listed in
qcnorm/ui/registry.py; shared session state is documented in qcnorm/ui/state.py; who is
signed in (team mode) or that nobody signs in (single-user mode) is qcnorm/ui/auth.py.
"""

import streamlit as st

from qcnorm.ui import auth, common, registry, state

st.set_page_config(page_title="qcnorm workbench", page_icon="◈", layout="wide",
                   initial_sidebar_state="expanded")
state.init()
auth.forget_passwords()  # password fields read on the last run are dropped before anything is drawn
state.keep()
common.style()
# Open the history database once at start (cached) so its path is printed to the console
# (issue: "printed at start"); it also decides the mode: accounts -> sign-in, else single-user.
ctx = auth.context()
pages = registry.page_keys(ctx)
if state.get("qc_page") not in pages:
    st.session_state["qc_page"] = registry.home(ctx)

with st.sidebar:
    st.markdown("### ◈ qcnorm")
    st.caption("Non-normal QC data: shape, stability, capability")
    st.radio(
        "Step", pages, key="qc_page",
        format_func=lambda k: registry.page(k).title, label_visibility="collapsed",
    )
    auth.sidebar(ctx)
    summary = st.container()

common.run_page(registry.page(state.get("qc_page")), ctx)
with summary:  # drawn after the page, so it shows what the page just loaded
    common.sidebar_summary()
