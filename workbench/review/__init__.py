"""The review page for a reviewer (HTML), kept out of the core: it draws with matplotlib.

* ``page``   — ``review_html(case, analysis)``: the self-contained page.
* ``charts`` — the control charts as inline SVG.
"""
