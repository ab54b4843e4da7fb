"""Test harnesses for outside programs: LibreOffice (workbook recalculation), Chromium (report)."""
