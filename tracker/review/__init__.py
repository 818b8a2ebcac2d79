"""What the log says: statistics (rates, intervals, p-charts), the weekly
scrap review, riser revisions before and after, plants side by side, the
riser check on the log's current design and the rendered report."""
