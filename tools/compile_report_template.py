"""Write sdmnet/output/report/template_code.py, the report template compiled by Jinja2.

Run after editing ``report.html.j2``: ``.venv/bin/python tools/compile_report_template.py``.
Until then the report compiles the template at run time (the same page, about 30 ms slower),
and tests/test_report.py says the compiled code is out of date.
"""

from pathlib import Path

from sdmnet.output import report

target = Path(report.__file__).with_name("template_code.py")
target.write_text(report.template_code_text(), encoding="utf-8")
print(f"wrote {target}")
