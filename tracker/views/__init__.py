"""Tables shaped for display, one module per dashboard page: pure functions over
a Store and pandas frames. The dashboard (``dashboard/``) shows what they return
and computes nothing itself; nothing here imports streamlit or prints.

- :mod:`tracker.views.common`: what the pages share (unit-system labels, the data
  version, pickers, refused rows, percent columns) and the conventions of all.
- :mod:`tracker.views.log_results`: the Log results page.
- :mod:`tracker.views.review`: the Weekly review page.
- :mod:`tracker.views.design_map`: the Design map page.
- :mod:`tracker.views.pattern_file`: the Pattern file page.
- :mod:`tracker.views.suggestions`: the Suggestions page.
- :mod:`tracker.views.team`: the Team page.
- :mod:`tracker.views.thermal`: the thermal check shown in the pattern file and the what-if.
"""
