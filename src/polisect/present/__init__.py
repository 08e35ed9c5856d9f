"""Present: the result as people and programs read it — JSON and CSV (`record`, the only
home of the result's key strings), the HTML report, figures and page helpers."""
