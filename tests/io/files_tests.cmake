# Tests of the runnel HDF5 and CSV readers and of format detection (engineer "files").
libseq_add_test(io_hdf5_reader_test SOURCES hdf5_reader_test.cpp MODULES core data io)
libseq_add_test(io_csv_reader_test SOURCES csv_reader_test.cpp MODULES core data io)
libseq_add_test(io_reader_test SOURCES reader_test.cpp MODULES core data io)
