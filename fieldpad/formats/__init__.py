"""Reading and writing records as files and text: CSV and JSON, the spreadsheet-formula guard, text made safe
for a terminal or a page.  Calls core only; no database."""
