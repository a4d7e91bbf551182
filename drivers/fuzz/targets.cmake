# The fuzz targets by name; each has a seed folder seeds/<name without fuzz_>.
# Included by drivers/fuzz/CMakeLists.txt (which builds them) and by
# tests/hardening/CMakeLists.txt (which runs them in the sanitizer tree).
set(TENSILED_FUZZ_TARGETS fuzz_lines fuzz_keyvalue fuzz_binary fuzz_control fuzz_config fuzz_rig_config
    fuzz_monitor_request fuzz_monitor_body fuzz_table_reader)
