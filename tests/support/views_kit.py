"""Every dashboard page's view module under one name, for the tests written when
``tracker.views`` was a single module: ``from tests.support import views_kit as views``."""

from tracker.views.common import *  # noqa: F403 (the tests read every page's names through one module)
from tracker.views.design_map import *  # noqa: F403 (as above)
from tracker.views.log_results import *  # noqa: F403 (as above)
from tracker.views.pattern_file import *  # noqa: F403 (as above)
from tracker.views.review import *  # noqa: F403 (as above)
from tracker.views.suggestions import *  # noqa: F403 (as above)
