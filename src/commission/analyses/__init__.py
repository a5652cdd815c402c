"""One analysis per kind of recorded file: read → physics → one result object (figures,
warnings, verdict, reason, source, chart data, ``as_json()``). ``commission analyse``, the
checklist checks and the record's charts all call the same function with the same settings.
"""
