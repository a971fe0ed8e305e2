"""The HTML map of a plan (``map.html``): one self-contained page that opens with no network.

Modules: :mod:`~routeplan.map.page` draws and writes the page (``render_map``, ``write_map``);
:mod:`~routeplan.map.features` turns the plan's tables into drawn layers and their texts;
:mod:`~routeplan.map.panel` the side panel, legend, review box and details box;
:mod:`~routeplan.map.details` the review data behind find, details and the colour views;
:mod:`~routeplan.map.scales` the colour scales and their sources;
:mod:`~routeplan.map.script` the page's scripts (layers; review tools);
:mod:`~routeplan.map.tiles` the tiles a re-plan redraws; :mod:`~routeplan.map.text` the
escaping of every shown string; :mod:`~routeplan.map.assets` and
:mod:`~routeplan.map.elements` the inlined libraries and the page's elements. The change map
of ``routeplan diff`` (:mod:`routeplan.diff.changemap`) is drawn with the same parts.
"""
