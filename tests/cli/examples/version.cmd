# The version line, as the project's CMakeLists.txt sets it.
--version
