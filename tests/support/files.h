#pragma once

// Files for tests: a temporary directory removed with everything in it, whole-file reads and
// writes, a directory's listing.

#include <cctype>
#include <cstddef>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <set>
#include <sstream>
#include <string>
#include <system_error>

#include <stdlib.h>

namespace loopsketch::test {

/// A fresh directory under the system's temporary directory, named `prefix`-XXXXXX, removed
/// with its contents when the object goes.
class TempDir
{
public:
    explicit TempDir(const std::string &prefix = "loopsketch-test")
    {
        std::string pattern
            = (std::filesystem::temp_directory_path() / (prefix + "-XXXXXX")).string();
        if (::mkdtemp(pattern.data()))
            m_path = pattern;
    }
    ~TempDir()
    {
        std::error_code ec;
        if (m_path.empty())
            return;
        // a test may have taken the write permission away
        std::filesystem::permissions(m_path, std::filesystem::perms::owner_all,
                                     std::filesystem::perm_options::add, ec);
        std::filesystem::remove_all(m_path, ec);
    }
    TempDir(const TempDir &) = delete;
    TempDir &operator=(const TempDir &) = delete;
    const std::filesystem::path &path() const { return m_path; }
    std::size_t entryCount() const
    {
        return static_cast<std::size_t>(std::distance(std::filesystem::directory_iterator(m_path),
                                                      std::filesystem::directory_iterator()));
    }

private:
    std::filesystem::path m_path;
};

/// The bytes of `path`; empty when it cannot be read.
inline std::string readBytes(const std::filesystem::path &path)
{
    std::ifstream in(path, std::ios::binary);
    std::ostringstream s;
    s << in.rdbuf();
    return s.str();
}

/// Writes `bytes` as the whole of `path`; false when that fails.
inline bool writeBytes(const std::filesystem::path &path, const std::string &bytes)
{
    std::ofstream out(path, std::ios::binary);
    out << bytes;
    return bool(out.flush());
}

/// The names in `dir`, sorted, separated by spaces.
inline std::string entriesOf(const std::filesystem::path &dir)
{
    std::set<std::string> names;
    for (const auto &e : std::filesystem::directory_iterator(dir))
        names.insert(e.path().filename().string());
    std::string joined;
    for (const auto &n : names)
        joined.append(joined.empty() ? "" : " ").append(n);
    return joined;
}

/// A name GoogleTest accepts for a test about `file`: the part before the first dot, every
/// character that is not a letter or digit made an X.
inline std::string caseName(const std::string &file)
{
    std::string name = file.substr(0, file.find('.'));
    for (char &ch : name)
        ch = std::isalnum(static_cast<unsigned char>(ch)) ? ch : 'X';
    return name;
}

} // namespace loopsketch::test
