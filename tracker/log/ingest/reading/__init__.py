"""Reading an import file: CSV or Excel, its encoding, its header and the width of its rows."""

