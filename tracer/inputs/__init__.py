"""What is measured, read into a :class:`~tracer.measurement.Measurement`: section sheets, and
photos of the cut end (:mod:`.photo`)."""
