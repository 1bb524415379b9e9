"""qcnorm workbench: page layout and navigation only (run with `streamlit run app.py`).

Pages live in qcnorm/ui/ (one module, one render() each) and are listed in
qcnorm/ui/registry.py; shared session state is documented in qcnorm/ui/state.py.
"""

import streamlit as st

from qcnorm.ui import common, registry, state

st.set_page_config(page_title="qcnorm workbench", page_icon="◈", layout="wide",
                   initial_sidebar_state="expanded")
state.init()
state.keep()
common.style()
# Open the history database once at start (cached) so its path is printed to the console
# (issue: "printed at start"); a failure here is shown on the pages that need the store.
try:
    from qcnorm.ui import release_page

    release_page.store()
except Exception:  # noqa: BLE001 - the release pages show the error with its next step
    pass

with st.sidebar:
    st.markdown("### ◈ qcnorm")
    st.caption("Non-normal QC data: shape, stability, capability")
    st.radio(
        "Step", registry.page_keys(), key="qc_page",
        format_func=lambda k: registry.page(k).title, label_visibility="collapsed",
    )
    summary = st.container()

common.run_page(registry.page(state.get("qc_page")))
with summary:  # drawn after the page, so it shows what the page just loaded
    common.sidebar_summary()
