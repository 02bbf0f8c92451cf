"""The review workbench: a local web application over the lab book (``calwork serve``).

Pages (Day, Run, Calibrations, Samples, Hess's law, Import, Export) render on the server and
read without JavaScript; ``/api/`` is the JSON interface the pages use. Changes are the lab
book's own audited actions (:mod:`calwork.labbook.lifecycle`).

>>> from calwork.web import create_app                  # doctest: +SKIP
>>> app = create_app("calwork-labbook.sqlite")          # doctest: +SKIP
"""

from calwork.web.app import create_app

__all__ = ["create_app"]
