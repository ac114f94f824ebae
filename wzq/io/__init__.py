"""The adapters: the schema of plan inputs, JSON plans, count files, the workbook
(reader, template, output sheets), the live Excel backend, the PDF report, folder
runs and the LibreOffice extension."""

__all__: list[str] = []
