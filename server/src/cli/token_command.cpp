#include "token_command.h"

#include <cstdio>

#include "access_token.h"
#include "factorwatch/storage/data_directory.h"

namespace factorwatch::server {

CLI::App* add_token_command(CLI::App& app, TokenArguments& a) {
  CLI::App* token = app.add_subcommand("token", "Print the daemon's access token (writes need it)");
  token->add_flag("--renew", a.renew, "Replace the token; the running daemon accepts only the new one from now on");
  return token;
}

int run_token_command(const TokenArguments& a, const GlobalArguments& global) {
  try {
    const std::string path = token_path(storage::resolve_data_directory(global.data_dir));
    const std::string token = a.renew ? renew_token(path) : ensure_token(path);
    std::printf("%s\n", token.c_str());
    // The token alone on stdout (for $(factorwatch token)); where it lives on stderr.
    std::fprintf(stderr, "(%s%s; send it as 'Authorization: Bearer <token>')\n", a.renew ? "renewed, " : "", path.c_str());
  } catch (const std::exception& e) {
    std::fprintf(stderr, "factorwatch token: %s\n", e.what());
    return kExitFailed;
  }
  return kExitOk;
}

}  // namespace factorwatch::server
