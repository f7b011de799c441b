"""An invented demo fleet: Harrow Vale Aggregates, a quarrying and haulage company.

Everything here is made up for the demo. The demo is built for an instant ``now``
(``demo_seed(now=...)``, ``manage.py seed_demo --now ...``): every record is laid back from
``now`` by a fixed span and every random draw comes from a seeded generator in a fixed order,
so the demo built at any instant is the same fleet shifted in time, and always has something
due. It includes:
- four depots (three in Europe/London, one in America/Chicago showing US customary units);
- 48 units in five classes, 15 months of hour-meter readings and fuelings;
- a water-contaminated delivery into the Mill Lane bulk tank (sample FS-W001), and a dirty
  (particulate) delivery into the Kestrel bulk tank (sample FS-D001), both recent;
- repeated rail relief-valve openings on one hauler (KQ-H04), water-in-fuel alarms on units
  fed from the wet tank, a pumping-imbalance event on a generator set;
- a service history (filter changes, separator drains, an injector replacement with its
  connector) and a few open work orders; one demo user per role.

The app stands above every other app: it builds rows of all of them.
"""
