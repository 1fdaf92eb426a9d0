"""Several wards of one hospital simulated together: outlying between wards, hospital odds.

- :mod:`planner.hospital.model`: the wards and the rules between them (:class:`HospitalModel`);
- :mod:`planner.hospital.sampling`: every ward's random inputs, drawn as for a ward on its
  own, joined into one list of patients per path;
- :mod:`planner.hospital.fast`: the compiled engine; :mod:`planner.hospital.simpy_model` (with
  :mod:`planner.hospital.simpy_wards`): the SimPy model, the reference; both follow the rules
  of :mod:`planner.hospital.model` and agree exactly; :mod:`planner.hospital.engines` chooses
  one and runs chunks of paths;
- :mod:`planner.hospital.result`: per-ward results and the outlying measures.
"""
