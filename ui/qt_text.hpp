// Core's text (std::string, string_view) as Qt's, in one place for the views.
#pragma once

#include <QString>
#include <string_view>

namespace swashtune::ui {

inline QString qs(std::string_view s) { return QString::fromUtf8(s.data(), static_cast<qsizetype>(s.size())); }

}  // namespace swashtune::ui
