"""Several wards of one hospital simulated together: outlying between wards, hospital odds.

- :mod:`planner.hospital.model`: the wards and the rules between them (:class:`HospitalModel`);
- :mod:`planner.hospital.sampling`: every ward's random inputs, drawn as for a ward on its
  own, joined into one list of patients per path;
- :mod:`planner.hospital.fast`: the compiled engine; :mod:`planner.hospital.simpy_model`: the
  SimPy model, the reference; both follow the rules of :mod:`planner.hospital.model`;
- :mod:`planner.hospital.result`: per-ward results and the outlying measures.
"""
