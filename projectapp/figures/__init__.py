"""Figures drawn on the server: reportlab drawings that render both as inline SVG for the page and as
vector graphics inside the PDF record."""
