#include "port_holder.h"

#include <arpa/inet.h>
#include <dirent.h>
#include <unistd.h>

#include <array>
#include <cstdint>
#include <cstring>
#include <cstdlib>
#include <fstream>
#include <sstream>
#include <vector>

namespace factorwatch::server {
namespace {

constexpr const char* kListen = "0A";  // TCP_LISTEN in /proc/net/tcp's "st" column

// The kernel prints each 32-bit word of the address as a number in host byte order
// (127.0.0.1 reads "0100007F" on x86): the number's bytes in memory are the address's.
std::string address_text(const std::string& hex, bool v6) {
  const std::size_t words = v6 ? 4 : 1;
  if (hex.size() != 8 * words) return hex;
  std::array<unsigned char, 16> raw{};
  for (std::size_t w = 0; w < words; ++w) {
    const auto word = static_cast<std::uint32_t>(std::strtoul(hex.substr(w * 8, 8).c_str(), nullptr, 16));
    std::memcpy(raw.data() + 4 * w, &word, sizeof word);
  }
  char text[INET6_ADDRSTRLEN] = {};
  if (!inet_ntop(v6 ? AF_INET6 : AF_INET, raw.data(), text, sizeof text)) return hex;
  return text;
}

// The inodes of sockets listening on `port`, with their addresses.
void listening_sockets(const char* table, bool v6, int port, std::vector<std::pair<std::string, std::string>>& out) {
  std::ifstream in(table);
  std::string line;
  std::getline(in, line);  // the column names
  while (std::getline(in, line)) {
    std::istringstream fields(line);
    std::string slot, local, remote, state, queues, timer, retransmits, uid, timeout, inode;
    if (!(fields >> slot >> local >> remote >> state >> queues >> timer >> retransmits >> uid >> timeout >> inode))
      continue;
    const auto colon = local.find(':');
    if (state != kListen || colon == std::string::npos) continue;
    if (std::strtol(local.substr(colon + 1).c_str(), nullptr, 16) != port) continue;
    out.emplace_back(inode, address_text(local.substr(0, colon), v6));
  }
}

std::string command_line(const std::string& pid) {
  std::ifstream in("/proc/" + pid + "/cmdline", std::ios::binary);
  std::string text((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  while (!text.empty() && text.back() == '\0') text.pop_back();
  for (char& c : text)  // shown on a terminal: no control characters
    if (c == '\0') c = ' ';
    else if (static_cast<unsigned char>(c) < 0x20 || c == 0x7f) c = '?';
  return text;
}

// The process holding socket `inode`, among those whose descriptors this user may read.
long owner_of(const std::string& inode, std::string& command) {
  const std::string wanted = "socket:[" + inode + "]";
  DIR* proc = opendir("/proc");
  if (!proc) return 0;
  long found = 0;
  while (dirent* entry = readdir(proc)) {
    const std::string pid = entry->d_name;
    if (pid.empty() || pid.find_first_not_of("0123456789") != std::string::npos) continue;
    const std::string fd_dir = "/proc/" + pid + "/fd";
    DIR* fds = opendir(fd_dir.c_str());
    if (!fds) continue;  // another user's process
    while (dirent* fd = readdir(fds)) {
      char target[64] = {};
      const std::string path = fd_dir + "/" + fd->d_name;
      const ssize_t n = readlink(path.c_str(), target, sizeof target - 1);
      if (n > 0 && wanted == std::string(target, static_cast<std::size_t>(n))) {
        found = std::atol(pid.c_str());
        break;
      }
    }
    closedir(fds);
    if (found) break;
  }
  closedir(proc);
  if (found) command = command_line(std::to_string(found));
  return found;
}

}  // namespace

PortHolder find_port_holder(int port) {
  PortHolder holder;
  std::vector<std::pair<std::string, std::string>> sockets;
  listening_sockets("/proc/net/tcp", false, port, sockets);
  listening_sockets("/proc/net/tcp6", true, port, sockets);
  if (sockets.empty()) return holder;
  holder.listening = true;
  holder.address = sockets.front().second;
  for (const auto& [inode, address] : sockets) {
    if (const long pid = owner_of(inode, holder.command)) {
      holder.pid = pid;
      holder.address = address;
      break;
    }
  }
  return holder;
}

std::string describe_port_holder(const PortHolder& h, int port) {
  if (!h.listening) return "";
  const std::string where = (h.address.find(':') != std::string::npos ? "[" + h.address + "]" : h.address) + ":" +
                            std::to_string(port);
  if (h.pid == 0) return "a process of another user listens on " + where;
  return "process " + std::to_string(h.pid) + (h.command.empty() ? "" : " (" + h.command + ")") + " listens on " +
         where;
}

}  // namespace factorwatch::server
