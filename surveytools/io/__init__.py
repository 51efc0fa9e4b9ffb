"""Reading survey workbooks safely and writing result files."""
