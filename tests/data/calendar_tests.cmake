# Calendar (CF time decoding) and unit conversion tests; owned by the NetCDF reader work.
libseq_add_test(data_calendar_test SOURCES calendar_test.cpp MODULES core data)
libseq_add_test(data_units_test SOURCES units_test.cpp MODULES core data)
