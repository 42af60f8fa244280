# Writes a C++ header holding a text file as a raw string literal (the embedded demo).
file(READ "${INPUT}" text)
file(WRITE "${OUTPUT}" "#pragma once\n#include <string_view>\ninline constexpr std::string_view ${NAME} = R\"loopsketch_demo(${text})loopsketch_demo\";\n")
