"""The workbook layer: reading input workbooks and writing evaluated ones around the core."""
