#!/usr/bin/env python3
"""Writes a workbook laid out the way that printed badly, for the office check to
prove that its print checks fail: 40 rows of numbers and a chart placed over the
rows where a landscape page ends, with no page break planned, so the application
breaks the page through the chart (its title on one page, an axis title on the
next) and prints more pages than the setup promises.

Usage: make_cut_chart.py OUT.xlsx   (needs openpyxl)
"""

import sys

from openpyxl import Workbook
from openpyxl.chart import LineChart, Reference


def main():
    book = Workbook()
    sheet = book.active
    sheet.title = "Cut chart"
    for row in range(1, 41):
        sheet.append([row, row * row])
    sheet.page_setup.orientation = "landscape"
    chart = LineChart()
    chart.title = "Growth of the square"
    chart.x_axis.title = "setting value"
    chart.y_axis.title = "square of it"
    chart.add_data(Reference(sheet, min_col=2, min_row=1, max_row=40))
    chart.height = 9
    chart.width = 14
    sheet.add_chart(chart, "D24")
    book.save(sys.argv[1])


if __name__ == "__main__":
    main()
