#include "serve_command.h"

namespace factorwatch::server {

CLI::App* add_serve_command(CLI::App& app, DaemonOptions& o) {
  CLI::App* serve = app.add_subcommand("serve", "Run the HTTP daemon on the database (until SIGTERM or Ctrl-C)");
  serve->add_option("--address", o.address, "Address to listen on")->capture_default_str();
  serve->add_option("--port", o.port, "Port to listen on (0: any free port, printed)")->capture_default_str();
  serve->add_option("--threads", o.threads, "Request worker threads")->capture_default_str();
  serve->add_option("--max-upload-mb", o.max_upload_mb, "Largest request body (a returns upload), MiB")
      ->capture_default_str();
  serve->add_flag("--reads-need-token", o.reads_need_token,
                  "Reads need the token too (always so when listening beyond loopback)");
  serve->add_option("--read-timeout", o.read_timeout_seconds,
                    "Seconds a whole request (head and body) may take to arrive")
      ->capture_default_str();
  serve->add_option("--head-timeout", o.head_timeout_seconds,
                    "Seconds a request's head may take to arrive after its first byte")
      ->capture_default_str();
  serve->add_option("--max-connections", o.max_connections, "Connections open at once")->capture_default_str();
  serve->add_option("--allow-host", o.allowed_hosts,
                    "A host name clients may use besides the listening address (repeatable; e.g. this "
                    "machine's name with --address 0.0.0.0)")
      ->type_name("NAME");
  serve->add_option("--write-timeout", o.write_timeout_seconds, "Seconds a socket write may wait while sending a response")
      ->capture_default_str();
  serve->add_option("--cache-mb", o.cache_mb, "Memory for rendered window responses, MiB")->capture_default_str();
  return serve;
}

int run_serve_command(DaemonOptions options, const GlobalArguments& global) {
  options.data_dir = global.data_dir;
  return run_daemon(options);
}

}  // namespace factorwatch::server
