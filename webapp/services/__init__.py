"""Services: the notebook's operations. Each takes the session explicitly and owns its transaction.

Modules: :mod:`.people` (people, groups, courses, tokens, sign-in), :mod:`.access` (who may see
and change what), :mod:`.calorimeters`, :mod:`.runs` (record, re-analyse, edit, lock, queries),
:mod:`.analysis` (calc calls and the result mapper), :mod:`.audit`, :mod:`.demo`.
"""
