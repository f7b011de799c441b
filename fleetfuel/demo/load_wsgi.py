"""The WSGI application of the load run: fleetfuel's own, with the floor page's URLconf
(floor.py) installed for this process only, so wrk can measure the floor beside the pages."""

import os

from django.conf import settings
from django.core.wsgi import get_wsgi_application

os.environ.setdefault("DJANGO_SETTINGS_MODULE", "fleetfuel.settings")
application = get_wsgi_application()
settings.ROOT_URLCONF = "fleetfuel.demo.floor"
