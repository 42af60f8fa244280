#include "circuit/structuralzeros.h"

#include <algorithm>

namespace loopsketch::detail {

namespace {

using Index = Eigen::Index;

/// Columns with a nonzero in each row, and rows with a nonzero in each column, of G + C.
struct Pattern
{
    std::vector<std::vector<int>> rowsOfColumn;
};

Pattern patternOf(const DescriptorSystem &system)
{
    const Index n = system.G.rows();
    Pattern p;
    p.rowsOfColumn.resize(static_cast<std::size_t>(n));
    for (Index c = 0; c < n; ++c)
        for (Index r = 0; r < n; ++r)
            if (system.G(r, c) != 0.0 || system.C(r, c) != 0.0)
                p.rowsOfColumn[static_cast<std::size_t>(c)].push_back(static_cast<int>(r));
    return p;
}

/// A maximum matching by augmenting paths (depth first, iterative): rowOfColumn[c] is the
/// row matched to column c, or -1. Returns the number of matched columns.
int maximumMatching(const Pattern &p, std::vector<int> &rowOfColumn, std::vector<int> &columnOfRow)
{
    const auto n = static_cast<int>(p.rowsOfColumn.size());
    rowOfColumn.assign(static_cast<std::size_t>(n), -1);
    columnOfRow.assign(static_cast<std::size_t>(n), -1);
    int matched = 0;
    // Cheap start: each column takes a free row if it has one.
    for (int c = 0; c < n; ++c)
        for (int r : p.rowsOfColumn[static_cast<std::size_t>(c)])
            if (columnOfRow[static_cast<std::size_t>(r)] < 0) {
                columnOfRow[static_cast<std::size_t>(r)] = c;
                rowOfColumn[static_cast<std::size_t>(c)] = r;
                ++matched;
                break;
            }
    std::vector<int> visitedRow(static_cast<std::size_t>(n), -1);
    std::vector<std::pair<int, std::size_t>> stack; // column, next candidate index
    std::vector<int> rowOnPath;
    for (int start = 0; start < n; ++start) {
        if (rowOfColumn[static_cast<std::size_t>(start)] >= 0)
            continue;
        stack.assign(1, {start, 0});
        rowOnPath.clear();
        bool augmented = false;
        while (!stack.empty() && !augmented) {
            auto &[c, next] = stack.back();
            const auto &rows = p.rowsOfColumn[static_cast<std::size_t>(c)];
            if (next >= rows.size()) {
                stack.pop_back();
                if (!rowOnPath.empty())
                    rowOnPath.pop_back();
                continue;
            }
            const int r = rows[next++];
            if (visitedRow[static_cast<std::size_t>(r)] == start)
                continue;
            visitedRow[static_cast<std::size_t>(r)] = start;
            rowOnPath.push_back(r);
            const int owner = columnOfRow[static_cast<std::size_t>(r)];
            if (owner < 0) {
                // Flip the path: each column on the stack takes the row after it.
                for (std::size_t k = 0; k < stack.size(); ++k) {
                    const int col = stack[k].first, row = rowOnPath[k];
                    rowOfColumn[static_cast<std::size_t>(col)] = row;
                    columnOfRow[static_cast<std::size_t>(row)] = col;
                }
                augmented = true;
                ++matched;
            } else {
                stack.push_back({owner, 0});
            }
        }
    }
    return matched;
}

} // namespace

bool StructuralZeros::any() const
{
    return std::find(zero.begin(), zero.end(), true) != zero.end();
}

StructuralZeros findStructuralZeros(const DescriptorSystem &system)
{
    StructuralZeros z;
    z.outputs = static_cast<int>(system.L.rows());
    z.inputs = static_cast<int>(system.B.cols());
    const Index n = system.G.rows();
    if (n == 0)
        return z;
    const Pattern p = patternOf(system);
    std::vector<int> rowOfColumn, columnOfRow;
    if (maximumMatching(p, rowOfColumn, columnOfRow) < n)
        return z; // structurally singular: claim nothing
    z.zero.assign(static_cast<std::size_t>(z.outputs) * static_cast<std::size_t>(z.inputs), false);
    std::vector<char> reached(static_cast<std::size_t>(n));
    std::vector<int> queue;
    for (int input = 0; input < z.inputs; ++input) {
        // Columns reachable by alternating paths from the columns matched to the rows
        // where this input enters.
        std::fill(reached.begin(), reached.end(), 0);
        queue.clear();
        for (Index i = 0; i < n; ++i) {
            if (system.B(i, input) == 0.0)
                continue;
            const int c = columnOfRow[static_cast<std::size_t>(i)];
            if (!reached[static_cast<std::size_t>(c)]) {
                reached[static_cast<std::size_t>(c)] = 1;
                queue.push_back(c);
            }
        }
        for (std::size_t q = 0; q < queue.size(); ++q) {
            for (int r : p.rowsOfColumn[static_cast<std::size_t>(queue[q])]) {
                const int next = columnOfRow[static_cast<std::size_t>(r)];
                if (!reached[static_cast<std::size_t>(next)]) {
                    reached[static_cast<std::size_t>(next)] = 1;
                    queue.push_back(next);
                }
            }
        }
        for (int output = 0; output < z.outputs; ++output) {
            bool connected = false;
            for (Index j = 0; j < n && !connected; ++j)
                connected = system.L(output, j) != 0.0 && reached[static_cast<std::size_t>(j)];
            z.zero[static_cast<std::size_t>(output) * static_cast<std::size_t>(z.inputs)
                   + static_cast<std::size_t>(input)]
                = !connected;
        }
    }
    return z;
}

} // namespace loopsketch::detail
