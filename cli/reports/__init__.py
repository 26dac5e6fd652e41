"""What a run writes for people and scripts: report.json (the public contract), report.html, the
finite-element section, the compare page, the safety notes, and the writer that fills a staged
output folder with a finished build.
"""
