# CF NetCDF reader tests; owned by the NetCDF reader work.
libseq_add_test(io_netcdf_files_test SOURCES netcdf_files_test.cpp MODULES core data io LABELS validation)
libseq_add_test(io_netcdf_reader_test SOURCES netcdf_reader_test.cpp MODULES core data io)
