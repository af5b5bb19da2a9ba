"""Services: the notebook's operations. Each takes the session explicitly and owns its transaction.

Every module, one line each (``tests/webapp/test_services_index.py`` checks the list is complete):

- ``access``: who may see and change what; every rule of the roles
- ``accounts``: passwords set by a coordinator or the person, one-time sign-in links
- ``analysis``: the bridge to calc: parse an upload, supply C_cal, analyze, map an Analysis to rows
- ``audit``: the audit trail of every change to a run or a calorimeter
- ``board_view``: the part of a dashboard a page shows: search, flag filter, pages of groups
- ``calibrations``: calibration authority: recording, approving, withdrawing, re-analyzing the runs that used one
- ``calorimeters``: calorimeters and their heat-capacity history
- ``checks``: plausibility checks of stored results: which runs are flagged and why
- ``classes``: courses, sections, groups, benches, rosters from CSV, who may see a section
- ``comments``: staff comments on a run or a group's work
- ``concurrency``: early write transactions, row locks, versions, the hash a lock signs
- ``control``: control charts per calorimeter and calibration due dates
- ``dashboard``: the class dashboard: runs of a section or course with flags, feedback, statistics
- ``dashboard_rows``: the dashboard's rows: each current result of a section's runs, with its flags
- ``demo``: the invented demo lab with its people and runs
- ``eln``: writing ``.eln`` archives of runs and calorimeters
- ``eln_calibrations``: reading back a calorimeter and its calibrations from an ``.eln`` archive; people by e-mail
- ``eln_check``: checking ``.eln`` archives: one root folder, safe paths, metadata, every ``sha256``
- ``eln_folders``: the folders of an ``.eln`` archive being written: a run's and a calorimeter's
- ``eln_import``: importing ``.eln`` archives, ours exactly, other notebooks' runs as new runs
- ``eln_plots``: light SVG plots written into archives
- ``eln_restore``: reading back the runs cupcal wrote into an archive, analyzed again and checked number for number
- ``errors``: the errors services raise (``ServiceError`` and its kinds), which views turn into responses
- ``feedback``: automatic feedback per group, and the flags' meanings
- ``import_store``: storing one run file of a bulk import: readings, group and bench, content hash
- ``imports``: bulk import of a section's runs from a zip or a folder
- ``in_force``: the heat capacity in force: the pool of recent approved calibrations, confirming a large move
- ``integrity``: ``cupcal db check``: the database's own check, foreign keys, complete runs, hashes
- ``integrity_locks``: the part of ``cupcal db check`` for signed runs and the audit chain
- ``jsontext``: JSON from callers, every failure an ``Invalid`` naming the field
- ``live``: live runs: created by a recorder, fed readings as they come, finished into a stored run
- ``live_advice``: the advisor's answer for a live run, once per batch of readings, kept on the row
- ``live_events``: how a change to a live run reaches every server process's pages (through the database)
- ``live_finish``: finishing a live run: its log analyzed and stored like an uploaded run
- ``live_runfile``: a live run's run file, checked at the start, completed for the advisor and the stored run
- ``live_view``: what pages, event streams and the API read of live runs
- ``marks``: marking schemes, the marks they give, marks set by hand
- ``package_import``: importing our own run packages (JSON export, RO-Crate zip) to the same numbers
- ``page_data``: read-only data of the pages and the preview of an upload
- ``people``: people, groups, courses, API tokens, signing in
- ``result_store``: making a new result a run's current one, audited
- ``review``: withdraw, exclude, accept; which runs count
- ``review_page``: what the run page shows of a run's review
- ``run_list``: the runs list's search, filters and sort, as one query
- ``run_upload``: reading an upload: files checked and analyzed, its group and calorimeter, its new run row
- ``runs``: record an upload, re-analyze, edit, lock, and the queries that list runs
- ``samples``: replicates grouped by sample, with mean, t-interval and ν_eff
- ``series``: series of repeat runs with the shared Type B part
- ``throttle``: sign-in back-off per account and per client address
- ``tokens``: API token scopes (read, write)
- ``webhook_guard``: what a webhook may reach: public addresses, no redirects, a timeout, a capped answer
- ``webhooks``: webhooks and their deliveries (signed JSON POSTs when a run is locked)

Files written out for use elsewhere are :mod:`webapp.exports`; session hooks are :mod:`webapp.db`.
"""
